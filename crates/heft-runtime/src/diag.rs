//! Problems found in a graph file (or a `--set` value), each tied to a place in its source,
//! rendered with the source line and a caret through miette.

use std::fmt;
use std::sync::Arc;

use miette::{Diagnostic, GraphicalReportHandler, GraphicalTheme, LabeledSpan, SourceCode};

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

/// The miette view of one problem (or of a related place).
#[derive(Debug)]
struct Rendered {
    message: String,
    source: Excerpt,
    /// Spans in the excerpt's own offsets.
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

/// Bytes of a line kept on each side of a problem's span; longer lines are cut, so that a
/// problem deep in a very long line (a generated file) shows only its neighbourhood.
const WINDOW: usize = 60;

/// The few lines around one place of a source, cut to a window around the place when they are
/// long: what the renderer reads instead of the whole text, so that rendering a problem costs
/// the size of its neighbourhood (plus one count of the lines before it), not of the file. Line
/// numbers are the file's own.
#[derive(Debug)]
struct Excerpt {
    name: String,
    text: String,
    /// The file's line number (0-based) of the excerpt's first line.
    first_line: usize,
    /// The original byte range the excerpt's current line shows, and where it starts in `text`.
    shown: std::ops::Range<usize>,
    shown_at: usize,
    /// The excerpt's line (0-based) that holds the place, and the characters of the file's
    /// line cut from its start (less the cut mark), so that columns are the file's own.
    main_line: usize,
    column_shift: usize,
    cut_mark: usize,
}

impl Excerpt {
    /// The excerpt around `span` of `source`, and the span in the excerpt's offsets.
    fn around(source: &Source, span: Span) -> (Excerpt, Span) {
        let text = source.text.as_str();
        let start = floor(text, span.start.min(text.len()));
        let end = floor(text, span.end().min(text.len()).max(start));
        let line_start = text[..start].rfind('\n').map_or(0, |i| i + 1);
        let line_end = text[start..].find('\n').map_or(text.len(), |i| start + i);
        // The window on this line, in offsets from its start, and the same on its neighbours.
        let lo = (start - line_start).saturating_sub(WINDOW);
        let hi = (end.min(start + 2 * WINDOW) - line_start) + WINDOW;
        // The part of the line from..to inside the window, marked where it is cut.
        let cut = |from: usize, to: usize| -> String {
            let a = floor(text, (from + lo).min(to));
            let b = floor(text, (from + hi).min(to)).max(a);
            let mut piece = String::new();
            if a > from {
                piece.push_str("… ");
            }
            piece.push_str(&text[a..b]);
            if b < to {
                piece.push_str(" …");
            }
            piece
        };
        let mut out = String::new();
        let mut first = line_start;
        let main_line = usize::from(line_start > 0);
        if line_start > 0 {
            let prev_end = line_start - 1;
            let prev_start = text[..prev_end].rfind('\n').map_or(0, |i| i + 1);
            first = prev_start;
            out.push_str(&cut(prev_start, prev_end));
            out.push('\n');
        }
        let line = cut(line_start, line_end);
        let a = floor(text, (line_start + lo).min(line_end));
        let shown_at = out.len() + if a > line_start { "… ".len() } else { 0 };
        out.push_str(&line);
        if line_end < text.len() {
            let next_start = line_end + 1;
            let next_end = text[next_start..].find('\n').map_or(text.len(), |i| next_start + i);
            out.push('\n');
            out.push_str(&cut(next_start, next_end));
        }
        let first_line = text[..first].matches('\n').count();
        let b = floor(text, (line_start + hi).min(line_end)).max(a);
        let local_start = shown_at + (start - a);
        let local_end = shown_at + (end.min(b) - a);
        let excerpt = Excerpt {
            name: source.name.clone(),
            text: out,
            first_line,
            shown: a..b,
            shown_at,
            main_line,
            column_shift: text[line_start..a].chars().count(),
            cut_mark: if a > line_start { "… ".chars().count() } else { 0 },
        };
        let local = inside(Span::new(local_start, local_end.max(local_start)), &excerpt.text);
        (excerpt, local)
    }

    /// `span` of the same source in the excerpt's offsets, when the excerpt shows it.
    fn map(&self, span: Span) -> Option<Span> {
        (self.shown.contains(&span.start) && span.end() <= self.shown.end).then(|| {
            let s = self.shown_at + (span.start - self.shown.start);
            Span::new(s, s + span.len)
        })
    }
}

impl SourceCode for Excerpt {
    fn read_span<'a>(
        &'a self,
        span: &miette::SourceSpan,
        context_lines_before: usize,
        context_lines_after: usize,
    ) -> Result<Box<dyn miette::SpanContents<'a> + 'a>, miette::MietteError> {
        let c = self.text.read_span(span, context_lines_before, context_lines_after)?;
        // The line and column of the span's start in the excerpt, turned into the file's.
        let before = &self.text[..span.offset().min(self.text.len())];
        let line = before.matches('\n').count();
        let column = before[before.rfind('\n').map_or(0, |i| i + 1)..].chars().count();
        let column = match line == self.main_line {
            true => column.saturating_sub(self.cut_mark) + self.column_shift,
            false => column,
        };
        Ok(Box::new(miette::MietteSpanContents::new_named(
            self.name.clone(),
            c.data(),
            *c.span(),
            c.line() + self.first_line,
            column,
            c.line_count(),
        )))
    }
}

/// The largest char boundary of `text` at or below `i`.
fn floor(text: &str, mut i: usize) -> usize {
    i = i.min(text.len());
    while !text.is_char_boundary(i) {
        i -= 1;
    }
    i
}

/// Keeps a span inside its text, so a caret at the very end of a text still shows.
fn inside(span: Span, text: &str) -> Span {
    let start = span.start.min(text.len().saturating_sub(1));
    Span::new(
        start,
        span.end().min(text.len()).max(start + 1).min(text.len().max(start)),
    )
}

fn rendered(p: &Problem) -> Rendered {
    let (source, main) = Excerpt::around(&p.place.source, p.place.span);
    let mut labels = vec![(main, p.label.clone())];
    let mut related = Vec::new();
    for (place, label) in &p.related {
        let here = Arc::ptr_eq(&place.source, &p.place.source)
            .then(|| source.map(place.span))
            .flatten();
        match here {
            Some(span) => labels.push((span, label.clone())),
            None => {
                let (excerpt, span) = Excerpt::around(&place.source, place.span);
                related.push(Rendered {
                    message: format!("{}: {label}", place.location()),
                    source: excerpt,
                    labels: vec![(span, label.clone())],
                    help: None,
                    related: Vec::new(),
                });
            }
        }
    }
    Rendered {
        message: format!("{}: {}", p.location(), p.message),
        source,
        labels,
        help: p.help.as_deref().map(str::to_owned),
        related,
    }
}

/// At most this many problems are shown in full; the rest are counted.
pub const SHOWN: usize = 20;

/// Renders problems with source lines and carets; `color` for a terminal. The first
/// [`SHOWN`] are drawn, the rest counted, so a file of a million bad lines is reported at
/// once.
pub fn render(problems: &[Problem], color: bool) -> String {
    let theme = if color {
        GraphicalTheme::unicode()
    } else {
        GraphicalTheme::unicode_nocolor()
    };
    let handler = GraphicalReportHandler::new_themed(theme).with_context_lines(1);
    let mut out = String::new();
    for p in problems.iter().take(SHOWN) {
        let r = rendered(p);
        if handler.render_report(&mut out, &r).is_err() {
            out.push_str(&format!("error: {p}\n"));
        }
        out.push('\n');
    }
    let n = problems.len();
    if n > SHOWN {
        out.push_str(&format!("{n} problems found; the first {SHOWN} are shown\n"));
    } else {
        out.push_str(&format!("{n} problem{} found\n", if n == 1 { "" } else { "s" }));
    }
    out
}
