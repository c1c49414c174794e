//! Problems found in a graph file (or a `--set` value), each tied to a place in its source,
//! rendered with the source line and a caret through miette.

use std::fmt;
use std::sync::Arc;

use miette::{Diagnostic, GraphicalReportHandler, GraphicalTheme, LabeledSpan, NamedSource, SourceCode};

/// A text that problems can point into: a graph file or a command-line value.
#[derive(Debug)]
pub struct Source {
    /// Shown as the file name (`graphs/jump.graph`, `--set 2`).
    pub name: String,
    /// The whole text.
    pub text: String,
}

impl Source {
    /// A new shared source.
    pub fn new(name: impl Into<String>, text: impl Into<String>) -> Arc<Source> {
        Arc::new(Source {
            name: name.into(),
            text: text.into(),
        })
    }

    /// 1-based line and column (in characters) of a byte offset.
    pub fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.text.len());
        let before = &self.text[..offset];
        let line = before.matches('\n').count() + 1;
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let col = self.text[line_start..offset].chars().count() + 1;
        (line, col)
    }
}

/// A byte range in a source.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Span {
    /// Start byte offset.
    pub start: usize,
    /// Length in bytes.
    pub len: usize,
    /// Which source of a graph (0: the graph file, then its recipes in the order read).
    pub file: u16,
}

impl Span {
    /// A span from `start` to `end` (exclusive) in source 0.
    pub fn new(start: usize, end: usize) -> Span {
        Span {
            start,
            len: end.saturating_sub(start),
            file: 0,
        }
    }
    /// The same range in source `file`.
    pub fn in_file(self, file: u16) -> Span {
        Span { file, ..self }
    }
    /// The byte just past the end.
    pub fn end(&self) -> usize {
        self.start + self.len
    }
    /// The smallest span holding both (in this span's source).
    pub fn to(&self, other: Span) -> Span {
        Span::new(self.start.min(other.start), self.end().max(other.end())).in_file(self.file)
    }
}

/// A place in a source.
#[derive(Debug, Clone)]
pub struct Place {
    /// The source.
    pub source: Arc<Source>,
    /// The range.
    pub span: Span,
}

impl Place {
    /// `file:line:column`.
    pub fn location(&self) -> String {
        let (l, c) = self.source.line_col(self.span.start);
        format!("{}:{l}:{c}", self.source.name)
    }
}

/// One problem in a graph: where, what, and how to fix it.
#[derive(Debug, Clone)]
pub struct Problem {
    /// Where.
    pub place: Place,
    /// What is wrong (one sentence).
    pub message: String,
    /// Short text under the caret.
    pub label: String,
    /// How to fix it, when there is something to say.
    pub help: Option<Box<str>>,
    /// Other places involved (the first driver of a port, the other end of a cycle).
    pub related: Vec<(Place, String)>,
}

impl Problem {
    /// A problem at a place.
    pub fn new(source: &Arc<Source>, span: Span, message: impl Into<String>) -> Problem {
        Problem {
            place: Place {
                source: Arc::clone(source),
                span,
            },
            message: message.into(),
            label: "here".to_owned(),
            help: None,
            related: Vec::new(),
        }
    }
    /// A problem at a span of one of a graph's sources.
    pub fn at(sources: &[Arc<Source>], span: Span, message: impl Into<String>) -> Problem {
        let source = sources.get(usize::from(span.file)).or(sources.first()).map(Arc::clone);
        let source = source.unwrap_or_else(|| Source::new("<graph>", ""));
        Problem::new(&source, span, message)
    }
    /// Sets the text under the caret.
    pub fn label(mut self, label: impl Into<String>) -> Problem {
        self.label = label.into();
        self
    }
    /// Adds advice.
    pub fn help(mut self, help: impl Into<String>) -> Problem {
        self.help = Some(help.into().into_boxed_str());
        self
    }
    /// Adds another place involved.
    pub fn also(mut self, place: Place, label: impl Into<String>) -> Problem {
        self.related.push((place, label.into()));
        self
    }
    /// `file:line:column` of the problem.
    pub fn location(&self) -> String {
        self.place.location()
    }
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.location(), self.message)
    }
}

/// The miette view of one problem (or of a related place in another source).
#[derive(Debug)]
struct Rendered {
    message: String,
    source: NamedSource<String>,
    labels: Vec<(Span, String)>,
    help: Option<String>,
    related: Vec<Rendered>,
}

impl fmt::Display for Rendered {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for Rendered {}

impl Diagnostic for Rendered {
    fn source_code(&self) -> Option<&dyn SourceCode> {
        Some(&self.source)
    }
    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        Some(Box::new(
            self.labels
                .iter()
                .map(|(s, l)| LabeledSpan::new(Some(l.clone()), s.start, s.len.max(1))),
        ))
    }
    fn help<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.help.as_ref().map(|h| Box::new(h) as Box<dyn fmt::Display>)
    }
    fn related<'a>(&'a self) -> Option<Box<dyn Iterator<Item = &'a dyn Diagnostic> + 'a>> {
        if self.related.is_empty() {
            None
        } else {
            Some(Box::new(self.related.iter().map(|r| r as &dyn Diagnostic)))
        }
    }
}

fn named(place: &Place) -> NamedSource<String> {
    NamedSource::new(place.source.name.clone(), place.source.text.clone())
}

/// Keeps a span inside its text, so a caret at the very end of a file still shows.
fn inside(span: Span, text: &str) -> Span {
    let start = span.start.min(text.len().saturating_sub(1));
    Span::new(
        start,
        span.end().min(text.len()).max(start + 1).min(text.len().max(start)),
    )
}

fn rendered(p: &Problem) -> Rendered {
    let mut labels = vec![(inside(p.place.span, &p.place.source.text), p.label.clone())];
    let mut related = Vec::new();
    for (place, label) in &p.related {
        if Arc::ptr_eq(&place.source, &p.place.source) {
            labels.push((place.span, label.clone()));
        } else {
            related.push(Rendered {
                message: format!("{}: {label}", place.location()),
                source: named(place),
                labels: vec![(place.span, label.clone())],
                help: None,
                related: Vec::new(),
            });
        }
    }
    Rendered {
        message: format!("{}: {}", p.location(), p.message),
        source: named(&p.place),
        labels,
        help: p.help.as_deref().map(str::to_owned),
        related,
    }
}

/// Renders problems with source lines and carets; `color` for a terminal.
pub fn render(problems: &[Problem], color: bool) -> String {
    let theme = if color {
        GraphicalTheme::unicode()
    } else {
        GraphicalTheme::unicode_nocolor()
    };
    let handler = GraphicalReportHandler::new_themed(theme).with_context_lines(1);
    let mut out = String::new();
    for p in problems {
        let r = rendered(p);
        if handler.render_report(&mut out, &r).is_err() {
            out.push_str(&format!("error: {p}\n"));
        }
        out.push('\n');
    }
    let n = problems.len();
    out.push_str(&format!("{n} problem{} found\n", if n == 1 { "" } else { "s" }));
    out
}
