//! The graph language: a line-oriented text format of heft's own.
//!
//! ```text
//! # comments run from `#` to the end of the line
//! format 1                          # format version, first
//! rate 24 fps                       # or a ratio: 24000/1001 fps
//! frames 1..96                      # inclusive frame range
//!
//! toss = trajectory.ballistic       # a node instance: name = plugin.node
//!     launch_velocity = (0.4, 0, 3.1) m/s     # indented lines are its parameters
//!     launch_time = 0.5 s
//!
//! toss.position -> follow.target    # a wire from an output port to an input port
//! write toss.position               # an output: out/toss.position.csv
//! write toss.velocity as toss_speed # ... or out/toss_speed.csv
//! write toss.position format parquet # out/toss.position.parquet, a long table
//! ```
//!
//! Parsing only checks the shape of each line; what the names mean is checked against the
//! loaded plugins by [`crate::check`].

use std::sync::Arc;

use crate::diag::{Problem, Source, Span};

/// The graph format version this heft reads.
pub const FORMAT_VERSION: u32 = 1;

/// The statements of the language, for help texts.
const STATEMENTS: &str = "statements are `format`, `rate`, `frames`, `name = plugin.node`, `a.out -> b.in`, \
                          `write node.port [as NAME] [format csv|parquet]`, `bake \"file.glb\"`, `plot \"file.svg\"`, `review \"file.html\"` and `include \"recipe.graph\" as name`";

/// Words that start a statement and cannot name a node.
pub const KEYWORDS: &[&str] = &[
    "format", "rate", "frames", "write", "as", "bake", "plot", "review", "include",
];

/// A value with its place in the source.
#[derive(Debug, Clone, PartialEq)]
pub struct Spanned<T> {
    /// The value.
    pub value: T,
    /// Where it is written.
    pub span: Span,
}

/// A unit symbol as written, with its place.
pub type UnitText = Option<Spanned<String>>;

/// A parameter value as written (units not yet applied).
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// `1.02 m`, `12`, `-3e-2 s`.
    Number {
        /// The number.
        value: f64,
        /// True when written without a fraction or exponent.
        whole: bool,
        /// The unit as written.
        unit: UnitText,
    },
    /// `(0, 0, 1.02) m`.
    Vector {
        /// Components.
        values: [f64; 3],
        /// The unit written after the vector, for components without their own.
        unit: UnitText,
        /// Units written with the components: `(-10 cm, 0, 2 cm)`.
        units: [UnitText; 3],
    },
    /// A bare word: `true`, `ring`.
    Word(String),
    /// Another node's parameter, `node.param` (the node declared earlier): the same value,
    /// given once. An included recipe's node is `include_name.node`.
    Reference {
        /// The node.
        node: String,
        /// Its parameter.
        param: String,
    },
    /// A quoted text: `"plates/trial 3.csv"` (no escapes; a text cannot hold `"`).
    Text(String),
    /// A keyframe `0.4 s: (0, 0, 1.02) m`.
    Key {
        /// Time.
        time: f64,
        /// Unit of the time.
        time_unit: UnitText,
        /// Value vector.
        values: [f64; 3],
        /// Unit of the vector.
        unit: UnitText,
        /// Units written with the components.
        units: [UnitText; 3],
    },
}

/// `name = value` under a node.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamLine {
    /// Parameter name.
    pub name: Spanned<String>,
    /// Its value.
    pub value: Spanned<Value>,
    /// True for a value that replaces the node's own (a recipe's override, a `--set`).
    pub replaces: bool,
}

/// `include "recipe.graph" as name` with indented `node.param = value` overrides.
#[derive(Debug, Clone, PartialEq)]
pub struct IncludeDecl {
    /// The recipe file as written (relative to the including file's folder).
    pub file: Spanned<String>,
    /// The instance name: the recipe's nodes are named `name_node`.
    pub name: Spanned<String>,
    /// Overrides: (recipe node, parameter line).
    pub overrides: Vec<(Spanned<String>, ParamLine)>,
}

/// `name = plugin.node` and its parameter lines.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeDecl {
    /// Instance name.
    pub name: Spanned<String>,
    /// Node type `plugin.node`.
    pub ty: Spanned<String>,
    /// Parameter lines in order.
    pub params: Vec<ParamLine>,
}

/// `node.port`.
#[derive(Debug, Clone, PartialEq)]
pub struct PortRef {
    /// Node instance name.
    pub node: Spanned<String>,
    /// Port name.
    pub port: Spanned<String>,
}

impl PortRef {
    /// The whole `node.port` span.
    pub fn span(&self) -> Span {
        self.node.span.to(self.port.span)
    }
    /// `node.port`.
    pub fn text(&self) -> String {
        format!("{}.{}", self.node.value, self.port.value)
    }
}

/// `a.out -> b.in`.
#[derive(Debug, Clone, PartialEq)]
pub struct Wire {
    /// The output port.
    pub from: PortRef,
    /// The input port.
    pub to: PortRef,
}

/// The file formats of a `write` line, the first the default: `csv` (one row per frame, one
/// column per value) and `parquet` (a long table: one row per frame, or per frame and point).
pub const WRITE_FORMATS: &[&str] = &["csv", "parquet"];

/// `write node.port [as name] [format csv|parquet]`.
#[derive(Debug, Clone, PartialEq)]
pub struct WriteDecl {
    /// The output port to write.
    pub port: PortRef,
    /// File stem, if given.
    pub name: Option<Spanned<String>>,
    /// File format as written (one of [`WRITE_FORMATS`] once checked), if given.
    pub format: Option<Spanned<String>>,
    /// The whole statement.
    pub span: Span,
}

/// What an output block makes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BlockKind {
    /// `bake "file.glb"`: a glTF 2.0 file.
    Bake,
    /// `plot "file.svg"`: a picture.
    Plot,
    /// `review "file.html"`: a page that plays the run in 3D with its curves and findings.
    Review,
}

impl BlockKind {
    /// The keyword that opens the block.
    pub fn word(self) -> &'static str {
        match self {
            BlockKind::Bake => "bake",
            BlockKind::Plot => "plot",
            BlockKind::Review => "review",
        }
    }
    /// The file extension of the example in messages.
    fn example_extension(self) -> &'static str {
        match self {
            BlockKind::Bake => "glb",
            BlockKind::Plot => "svg",
            BlockKind::Review => "html",
        }
    }
}

/// One series line in an output block: `node.port`, or `node.port joints N`.
#[derive(Debug, Clone, PartialEq)]
pub struct BlockItem {
    /// The output port.
    pub port: PortRef,
    /// For points: how many consecutive points make one chain (a strand).
    pub chains: Option<Spanned<usize>>,
}

/// `bake "file"`, `plot "file"` or `review "file"` with its indented series lines and options.
#[derive(Debug, Clone, PartialEq)]
pub struct OutputBlock {
    /// Bake, plot or review.
    pub kind: BlockKind,
    /// The file name as written (relative to the output folder).
    pub file: Spanned<String>,
    /// The series, in order.
    pub items: Vec<BlockItem>,
    /// `name = value` options.
    pub options: Vec<ParamLine>,
}

/// The open indented block while parsing.
enum Block {
    Node(NodeDecl),
    Output(OutputBlock),
    Include(IncludeDecl),
}

/// A parsed graph file.
#[derive(Debug, Clone)]
pub struct GraphFile {
    /// The text it came from.
    pub source: Arc<Source>,
    /// `format N`.
    pub format: Option<Spanned<u32>>,
    /// `rate N fps` or `rate N/D fps`, as (numerator, denominator).
    pub rate: Option<Spanned<(u32, u32)>>,
    /// `frames A..B`, inclusive.
    pub frames: Option<Spanned<(i64, i64)>>,
    /// Node instances.
    pub nodes: Vec<NodeDecl>,
    /// Wires.
    pub wires: Vec<Wire>,
    /// Outputs to write.
    pub writes: Vec<WriteDecl>,
    /// Bakes, plots and review pages.
    pub blocks: Vec<OutputBlock>,
    /// Recipes to include (expanded by [`crate::recipes::expand`]).
    pub includes: Vec<IncludeDecl>,
    /// Every source a span may point into: the graph file first, then its recipes.
    pub sources: Vec<Arc<Source>>,
}

/// A cursor over one line; offsets are bytes into the whole source.
struct Line<'a> {
    text: &'a str,
    base: usize,
    pos: usize,
}

impl<'a> Line<'a> {
    fn new(text: &'a str, base: usize) -> Line<'a> {
        Line { text, base, pos: 0 }
    }
    fn rest(&self) -> &'a str {
        &self.text[self.pos..]
    }
    fn at(&self) -> usize {
        self.base + self.pos
    }
    fn span_from(&self, start: usize) -> Span {
        Span::new(start, self.at())
    }
    fn skip_ws(&mut self) {
        let trimmed = self.rest().trim_start();
        self.pos = self.text.len() - trimmed.len();
    }
    fn done(&mut self) -> bool {
        self.skip_ws();
        self.pos >= self.text.len()
    }
    fn peek(&self) -> Option<char> {
        self.rest().chars().next()
    }
    fn eat(&mut self, s: &str) -> bool {
        self.skip_ws();
        if self.rest().starts_with(s) {
            self.pos += s.len();
            true
        } else {
            false
        }
    }
    fn ident(&mut self) -> Option<Spanned<String>> {
        self.skip_ws();
        let start = self.at();
        let rest = self.rest();
        let mut chars = rest.char_indices();
        match chars.next() {
            Some((_, c)) if c.is_ascii_alphabetic() || c == '_' => {}
            _ => return None,
        }
        let end = chars
            .find(|(_, c)| !(c.is_ascii_alphanumeric() || *c == '_' || *c == '-'))
            .map_or(rest.len(), |(i, _)| i);
        self.pos += end;
        Some(Spanned {
            value: rest[..end].to_owned(),
            span: self.span_from(start),
        })
    }
    /// A number in the usual decimal syntax; returns the value and whether it is whole.
    fn number(&mut self) -> Option<Spanned<(f64, bool)>> {
        self.skip_ws();
        let start = self.at();
        let rest = self.rest();
        let b = rest.as_bytes();
        let mut i = 0;
        if i < b.len() && (b[i] == b'-' || b[i] == b'+') {
            i += 1;
        }
        let digits_start = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        let mut whole = true;
        // A fraction, but not the `..` of a range.
        if i < b.len() && b[i] == b'.' && !(i + 1 < b.len() && b[i + 1] == b'.') {
            whole = false;
            i += 1;
            while i < b.len() && b[i].is_ascii_digit() {
                i += 1;
            }
        }
        if i == digits_start || (i == digits_start + 1 && !whole) {
            return None;
        }
        if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
            let mut j = i + 1;
            if j < b.len() && (b[j] == b'-' || b[j] == b'+') {
                j += 1;
            }
            if j < b.len() && b[j].is_ascii_digit() {
                while j < b.len() && b[j].is_ascii_digit() {
                    j += 1;
                }
                whole = false;
                i = j;
            }
        }
        let value: f64 = rest[..i].parse().ok()?;
        self.pos += i;
        Some(Spanned {
            value: (value, whole),
            span: self.span_from(start),
        })
    }
    /// The rest of the line up to `stop` (exclusive), trimmed, as a unit symbol.
    fn unit_until(&mut self, stop: Option<char>) -> UnitText {
        self.skip_ws();
        let rest = self.rest();
        let end = stop.and_then(|c| rest.find(c)).unwrap_or(rest.len());
        let text = rest[..end].trim_end();
        let start = self.at();
        self.pos += end;
        if text.is_empty() {
            None
        } else {
            Some(Spanned {
                value: text.to_owned(),
                span: Span::new(start, start + text.len()),
            })
        }
    }
}

fn problem(source: &Arc<Source>, span: Span, msg: impl Into<String>) -> Problem {
    Problem::new(source, span, msg)
}

fn valid_unit(source: &Arc<Source>, unit: &UnitText) -> Result<(), Problem> {
    if let Some(u) = unit
        && !u
            .value
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || " /^*%·".contains(c))
    {
        return Err(problem(source, u.span, format!("`{}` is not a unit", u.value))
            .label("not a unit")
            .help("write a number and a unit, e.g. `28 cm`, `(0, 0, 1) m`, `3.1 m/s`"));
    }
    Ok(())
}

fn vector(line: &mut Line<'_>, source: &Arc<Source>) -> Result<([f64; 3], [UnitText; 3]), Problem> {
    let open = line.at();
    if !line.eat("(") {
        return Err(problem(
            source,
            Span::new(open, open + 1),
            "expected `(` to start a vector",
        ));
    }
    let mut values = [0.0; 3];
    let mut units: [UnitText; 3] = [None, None, None];
    for (k, v) in values.iter_mut().enumerate() {
        if k > 0 && !line.eat(",") {
            line.skip_ws();
            let at = line.at();
            return Err(
                problem(source, Span::new(at, at + 1), "expected `,` between vector components")
                    .label("expected `,`")
                    .help("a vector has three components: `(x, y, z) unit`"),
            );
        }
        match line.number() {
            Some(n) => {
                *v = n.value.0;
                // A unit of the component's own, up to the next `,` or `)`.
                line.skip_ws();
                let rest = line.rest();
                let end = rest.find([',', ')']).unwrap_or(rest.len());
                let text = rest[..end].trim_end();
                if text.starts_with(|c: char| c.is_alphabetic() || c == '%') {
                    let at = line.at();
                    units[k] = Some(Spanned {
                        value: text.to_owned(),
                        span: Span::new(at, at + text.len()),
                    });
                    line.pos += end;
                    valid_unit(source, &units[k])?;
                }
            }
            None => {
                line.skip_ws();
                let at = line.at();
                return Err(
                    problem(source, Span::new(at, at + 1), "expected a number in the vector")
                        .label("expected a number")
                        .help("a vector has three components: `(x, y, z) unit`"),
                );
            }
        }
    }
    if !line.eat(")") {
        line.skip_ws();
        let at = line.at();
        return Err(
            problem(source, Span::new(at, at + 1), "expected `)` after three components")
                .label("expected `)`")
                .help("a vector has three components: `(x, y, z) unit`"),
        );
    }
    Ok((values, units))
}

/// Parses a parameter value such as `28 cm`, `(0, 0, 1) m`, `ring` or `0.4 s: (0, 0, 1) m`.
/// `line` is the text of the value, starting at byte `base` of `source`.
pub fn parse_value(source: &Arc<Source>, text: &str, base: usize) -> Result<Spanned<Value>, Problem> {
    let mut line = Line::new(text, base);
    line.skip_ws();
    let start = line.at();
    let value = match line.peek() {
        None => {
            return Err(problem(
                source,
                Span::new(start, start + 1),
                "expected a value after `=`",
            ));
        }
        Some('"') => {
            let body = &line.rest()[1..];
            let Some(close) = body.find('"') else {
                return Err(problem(
                    source,
                    Span::new(start, base + text.trim_end().len()),
                    "this text has no closing `\"`",
                )
                .label("unclosed text"));
            };
            let t = body[..close].to_owned();
            line.pos += close + 2;
            if !line.done() {
                let at = line.at();
                return Err(problem(
                    source,
                    Span::new(at, base + text.trim_end().len()),
                    "unexpected text after the value",
                ));
            }
            Value::Text(t)
        }
        Some('(') => {
            let (values, units) = vector(&mut line, source)?;
            let unit = line.unit_until(None);
            valid_unit(source, &unit)?;
            Value::Vector { values, unit, units }
        }
        Some(c) if c.is_ascii_digit() || c == '-' || c == '+' || c == '.' => {
            let n = line
                .number()
                .ok_or_else(|| problem(source, Span::new(start, start + 1), "expected a number"))?;
            let unit = line.unit_until(Some(':'));
            if line.eat(":") {
                valid_unit(source, &unit)?;
                let (values, units) = vector(&mut line, source)?;
                let vunit = line.unit_until(None);
                valid_unit(source, &vunit)?;
                Value::Key {
                    time: n.value.0,
                    time_unit: unit,
                    values,
                    unit: vunit,
                    units,
                }
            } else {
                valid_unit(source, &unit)?;
                Value::Number {
                    value: n.value.0,
                    whole: n.value.1,
                    unit,
                }
            }
        }
        Some(_) => {
            let w = line.ident().ok_or_else(|| {
                problem(
                    source,
                    Span::new(start, start + 1),
                    "expected a number, a vector `(x, y, z)`, a word or `node.param`",
                )
            })?;
            // `node.param`, `recipe.node.param`: another node's parameter.
            let mut path = vec![w.value.clone()];
            while line.peek() == Some('.') {
                line.pos += 1;
                let Some(next) = line.ident() else {
                    let at = line.at();
                    return Err(problem(
                        source,
                        Span::new(at.saturating_sub(1), at),
                        "expected a parameter name after `.`",
                    )
                    .label("`node.param` names another node's parameter"));
                };
                path.push(next.value);
            }
            if !line.done() {
                let at = line.at();
                return Err(problem(
                    source,
                    Span::new(at, base + text.len()),
                    "unexpected text after the value",
                ));
            }
            match path.split_last() {
                Some((param, node)) if !node.is_empty() => Value::Reference {
                    node: node.join("."),
                    param: param.clone(),
                },
                _ => Value::Word(w.value),
            }
        }
    };
    let end = base + text.trim_end().len();
    Ok(Spanned {
        value,
        span: Span::new(start, end),
    })
}

fn port_ref(line: &mut Line<'_>, source: &Arc<Source>, what: &str) -> Result<PortRef, Problem> {
    line.skip_ws();
    let at = line.at();
    let node = line.ident();
    let dot = line.rest().starts_with('.');
    if dot {
        line.pos += 1;
    }
    let port = if dot { line.ident() } else { None };
    match (node, port) {
        (Some(node), Some(port)) => Ok(PortRef { node, port }),
        _ => Err(problem(
            source,
            Span::new(at, at.max(line.at()) + 1),
            format!("expected {what} as `node.port`"),
        )
        .label("expected `node.port`")),
    }
}

fn statement(
    source: &Arc<Source>,
    line: &mut Line<'_>,
    graph: &mut GraphFile,
    current: &mut Option<Block>,
) -> Result<(), Problem> {
    let start = line.at();
    let Some(word) = line.ident() else {
        return Err(problem(source, Span::new(start, start + 1), "expected a statement")
            .label("not a statement")
            .help(STATEMENTS));
    };
    let end_check = |line: &mut Line<'_>| -> Result<(), Problem> {
        if line.done() {
            Ok(())
        } else {
            let at = line.at();
            Err(problem(
                source,
                Span::new(at, line.base + line.text.len()),
                "unexpected text at the end of the line",
            )
            .label("unexpected"))
        }
    };
    match word.value.as_str() {
        "format" => {
            let n = line.number().filter(|n| n.value.1 && n.value.0 >= 0.0).ok_or_else(|| {
                problem(
                    source,
                    line.span_from(start),
                    "expected a format version number: `format 1`",
                )
            })?;
            end_check(line)?;
            if graph.format.is_some() {
                return Err(problem(source, word.span, "the format version is given twice"));
            }
            graph.format = Some(Spanned {
                value: n.value.0 as u32,
                span: n.span,
            });
        }
        "rate" => {
            let num = line.number();
            let mut den = None;
            let slash = line.eat("/");
            if slash {
                den = line.number();
            }
            let unit = line.unit_until(None);
            let ok_int = |n: &Spanned<(f64, bool)>| n.value.1 && n.value.0 >= 1.0 && n.value.0 <= f64::from(u32::MAX);
            let span = line.span_from(start);
            let (Some(num), true) = (
                num,
                unit.as_ref().is_some_and(|u| u.value == "fps") && slash == den.is_some(),
            ) else {
                return Err(problem(
                    source,
                    span,
                    "expected a frame rate such as `rate 24 fps` or `rate 24000/1001 fps`",
                )
                .label("not a frame rate"));
            };
            if num.value.0 == 0.0 || den.as_ref().is_some_and(|d| d.value.0 == 0.0) {
                return Err(problem(
                    source,
                    span,
                    "a frame rate of 0 has no frames: give frames per second above 0",
                )
                .help("for example `rate 24 fps`"));
            }
            if !ok_int(&num) || den.as_ref().is_some_and(|d| !ok_int(d)) {
                return Err(problem(
                    source,
                    span,
                    "a frame rate is a whole number of frames per second or a ratio of whole numbers",
                )
                .help("for 23.976 fps write `rate 24000/1001 fps`"));
            }
            if graph.rate.is_some() {
                return Err(problem(source, word.span, "the frame rate is given twice"));
            }
            graph.rate = Some(Spanned {
                value: (num.value.0 as u32, den.map_or(1, |d| d.value.0 as u32)),
                span,
            });
        }
        "frames" => {
            let a = line.number();
            let dots = line.eat("..");
            let b = line.number();
            let span = line.span_from(start);
            let (Some(a), true, Some(b)) = (a, dots, b) else {
                return Err(problem(source, span, "expected a frame range such as `frames 1..96`"));
            };
            end_check(line)?;
            if !a.value.1 || !b.value.1 {
                return Err(problem(source, span, "frame numbers are whole numbers"));
            }
            // Whole numbers are read as f64: beyond 2^53 they are no longer exact.
            const EXACT: f64 = 9_007_199_254_740_992.0;
            if a.value.0.abs() > EXACT || b.value.0.abs() > EXACT {
                return Err(
                    problem(source, span, "frame numbers run from -2^53 to 2^53 (9007199254740992)")
                        .help("a run evaluates at most ten million frames: `frames 1..96`"),
                );
            }
            if b.value.0 < a.value.0 {
                return Err(problem(source, span, "the frame range ends before it starts")
                    .help("write the first frame, then the last: `frames 1..96`"));
            }
            if graph.frames.is_some() {
                return Err(problem(source, word.span, "the frame range is given twice"));
            }
            graph.frames = Some(Spanned {
                value: (a.value.0 as i64, b.value.0 as i64),
                span,
            });
        }
        "include" => {
            line.skip_ws();
            let at = line.at();
            let rest = line.rest();
            let value_end = rest.rfind(" as ").unwrap_or(rest.len());
            let value = parse_value(source, &rest[..value_end], at)?;
            let Value::Text(file) = value.value else {
                return Err(problem(
                    source,
                    value.span,
                    "expected a quoted recipe file: `include \"braid.graph\" as name`",
                )
                .label("not a quoted file name"));
            };
            line.pos += value_end;
            let as_at = line.at();
            if !matches!(line.ident(), Some(w) if w.value == "as") {
                return Err(problem(
                    source,
                    Span::new(as_at, as_at + 1),
                    "expected `as name` after the recipe file",
                )
                .help("the recipe's nodes are named `name_node`, so one recipe can be included several times"));
            }
            let name = line
                .ident()
                .ok_or_else(|| problem(source, line.span_from(as_at), "expected a name after `as`"))?;
            end_check(line)?;
            *current = Some(Block::Include(IncludeDecl {
                file: Spanned {
                    value: file,
                    span: value.span,
                },
                name,
                overrides: Vec::new(),
            }));
        }
        "bake" | "plot" | "review" => {
            let kind = match word.value.as_str() {
                "bake" => BlockKind::Bake,
                "plot" => BlockKind::Plot,
                _ => BlockKind::Review,
            };
            line.skip_ws();
            let at = line.at();
            let value = parse_value(source, line.rest(), at)?;
            let Value::Text(file) = value.value else {
                return Err(problem(
                    source,
                    value.span,
                    format!(
                        "expected a quoted file name: `{} \"name.{}\"`",
                        word.value,
                        kind.example_extension()
                    ),
                )
                .label("not a quoted file name"));
            };
            *current = Some(Block::Output(OutputBlock {
                kind,
                file: Spanned {
                    value: file,
                    span: value.span,
                },
                items: Vec::new(),
                options: Vec::new(),
            }));
        }
        "write" => {
            let port = port_ref(line, source, "the output to write")?;
            let mut name = None;
            let mut format = None;
            while !line.done() {
                let at = line.at();
                match line.ident() {
                    Some(w) if w.value == "as" && name.is_none() && format.is_none() => {
                        name =
                            Some(line.ident().ok_or_else(|| {
                                problem(source, line.span_from(at), "expected a file name after `as`")
                            })?);
                    }
                    Some(w) if w.value == "format" && format.is_none() => {
                        format = Some(line.ident().ok_or_else(|| {
                            problem(source, line.span_from(at), "expected a file format after `format`")
                                .help(format!("formats: {}", WRITE_FORMATS.join(", ")))
                        })?);
                    }
                    _ => {
                        return Err(problem(
                            source,
                            Span::new(at, line.base + line.text.len()),
                            "expected `as NAME`, `format FORMAT` or the end of the line",
                        )
                        .help(format!(
                            "a write reads `write node.port [as NAME] [format FORMAT]`; formats: {}",
                            WRITE_FORMATS.join(", ")
                        )));
                    }
                }
            }
            end_check(line)?;
            graph.writes.push(WriteDecl {
                port,
                name,
                format,
                span: line.span_from(start),
            });
        }
        _ => {
            if line.rest().starts_with('.') {
                // A wire: node.port -> node.port
                line.pos = start - line.base;
                let from = port_ref(line, source, "an output port")?;
                if !line.eat("->") {
                    let at = line.at();
                    return Err(
                        problem(source, Span::new(at, at + 1), "expected `->` after the output port")
                            .help("a wire reads `from_node.output -> to_node.input`"),
                    );
                }
                let to = port_ref(line, source, "an input port")?;
                end_check(line)?;
                graph.wires.push(Wire { from, to });
            } else if line.eat("=") {
                let ty_start = {
                    line.skip_ws();
                    line.at()
                };
                let plugin = line.ident();
                let dot = line.rest().starts_with('.');
                if dot {
                    line.pos += 1;
                }
                let node = if dot { line.ident() } else { None };
                let (Some(_), Some(_)) = (plugin, node) else {
                    return Err(problem(
                        source,
                        line.span_from(ty_start).to(Span::new(ty_start, ty_start + 1)),
                        "expected a node type as `plugin.node`",
                    )
                    .label("expected `plugin.node`"));
                };
                let ty = Spanned {
                    value: line.text[ty_start - line.base..line.pos].to_owned(),
                    span: line.span_from(ty_start),
                };
                end_check(line)?;
                if KEYWORDS.contains(&word.value.as_str()) {
                    return Err(problem(
                        source,
                        word.span,
                        format!("`{}` is a keyword and cannot name a node", word.value),
                    ));
                }
                *current = Some(Block::Node(NodeDecl {
                    name: word,
                    ty,
                    params: Vec::new(),
                }));
            } else if line.rest().trim_start().starts_with("->") {
                // `head -> tail.anchor`: a wire whose start names a node but not its output.
                return Err(problem(
                    source,
                    word.span,
                    format!("a wire starts at an output, `{}.OUTPUT`, not at a node", word.value),
                )
                .label("no output named")
                .help(format!(
                    "write `{}.<output> -> ...`; `heft nodes TYPE` lists a node type's outputs",
                    word.value
                )));
            } else {
                return Err(
                    problem(source, word.span, format!("unknown statement `{}`", word.value))
                        .label("not a statement")
                        .help(STATEMENTS),
                );
            }
        }
    }
    Ok(())
}

fn close_block(graph: &mut GraphFile, block: Option<Block>) {
    match block {
        Some(Block::Node(n)) => graph.nodes.push(n),
        Some(Block::Output(o)) => graph.blocks.push(o),
        Some(Block::Include(i)) => graph.includes.push(i),
        None => {}
    }
}

/// An indented line under `include`: `node.param = value`.
fn override_line(source: &Arc<Source>, line: &mut Line<'_>, inc: &mut IncludeDecl) -> Result<(), Problem> {
    line.skip_ws();
    let start = line.at();
    let node = line.ident();
    let dot = line.rest().starts_with('.');
    if dot {
        line.pos += 1;
    }
    let name = if dot { line.ident() } else { None };
    let (Some(node), Some(name)) = (node, name) else {
        return Err(problem(
            source,
            Span::new(start, line.at().max(start + 1)),
            "expected `node.param = value`",
        )
        .label("not an override")
        .help("under `include`, each line sets a parameter of one of the recipe's nodes"));
    };
    if !line.eat("=") {
        let at = line.at();
        return Err(problem(
            source,
            Span::new(at, at + 1),
            "expected `=` after `node.param`",
        ));
    }
    let at = line.at();
    let value = parse_value(source, line.rest(), at)?;
    inc.overrides.push((
        node,
        ParamLine {
            name,
            value,
            replaces: true,
        },
    ));
    Ok(())
}

/// An indented line under `bake`, `plot` or `review`: `name = value` or `node.port [joints N]`.
fn block_line(source: &Arc<Source>, line: &mut Line<'_>, block: &mut OutputBlock) -> Result<(), Problem> {
    line.skip_ws();
    let rest = line.rest();
    let is_option = rest.find('=').is_some_and(|eq| !rest[..eq].contains('.'));
    if is_option {
        let name = line
            .ident()
            .ok_or_else(|| problem(source, Span::new(line.at(), line.at() + 1), "expected an option name"))?;
        if !line.eat("=") {
            let at = line.at();
            return Err(problem(
                source,
                Span::new(at, at + 1),
                "expected `=` after the option name",
            ));
        }
        let at = line.at();
        // `frames = A..B` is kept as text and read by the block's checker.
        let value = if name.value == "frames" {
            let raw = line.rest();
            let lead = raw.len() - raw.trim_start().len();
            let text = raw.trim();
            Spanned {
                value: Value::Text(text.to_owned()),
                span: Span::new(at + lead, at + lead + text.len()),
            }
        } else {
            parse_value(source, line.rest(), at)?
        };
        block.options.push(ParamLine {
            name,
            value,
            replaces: false,
        });
        return Ok(());
    }
    let port = port_ref(line, source, "a series")?;
    let mut chains = None;
    if !line.done() {
        let at = line.at();
        match line.ident() {
            Some(w) if w.value == "joints" => {
                let n = line
                    .number()
                    .filter(|n| n.value.1 && n.value.0 >= 1.0)
                    .ok_or_else(|| problem(source, line.span_from(at), "expected the joints per chain: `joints 13`"))?;
                chains = Some(Spanned {
                    value: n.value.0 as usize,
                    span: n.span,
                });
            }
            Some(w) if w.value == "chains" => {
                return Err(problem(source, w.span, "`chains N` is now `joints N`")
                    .label("renamed")
                    .help("it always meant chains of N joints; for a strand node leave it out (heft takes the joints per chain from the strand), for other points write `joints N`"));
            }
            _ => {
                return Err(problem(
                    source,
                    Span::new(at, line.base + line.text.len()),
                    "expected `joints N` or the end of the line",
                )
                .help("a series line reads `node.port`, or `node.port joints N` for points that form chains of N joints (a strand node's points form chains without it)"));
            }
        }
        if !line.done() {
            let at = line.at();
            return Err(problem(
                source,
                Span::new(at, line.base + line.text.len()),
                "unexpected text at the end of the line",
            ));
        }
    }
    block.items.push(BlockItem { port, chains });
    Ok(())
}

/// The line without its comment: from the first `#` outside a quoted text.
fn strip_comment(line: &str) -> &str {
    let mut quoted = false;
    for (i, c) in line.char_indices() {
        match c {
            '"' => quoted = !quoted,
            '#' if !quoted => return &line[..i],
            _ => {}
        }
    }
    line
}

/// Parses a graph file. Returns what could be read and every problem found.
pub fn parse(source: &Arc<Source>) -> (GraphFile, Vec<Problem>) {
    parse_as(source, false)
}

/// Parses a recipe: like a graph, but its frame rate and range may be left out (the graph
/// that includes it gives the timeline; a recipe's own are ignored there).
pub fn parse_recipe(source: &Arc<Source>) -> (GraphFile, Vec<Problem>) {
    parse_as(source, true)
}

fn parse_as(source: &Arc<Source>, recipe: bool) -> (GraphFile, Vec<Problem>) {
    let mut graph = GraphFile {
        source: Arc::clone(source),
        format: None,
        rate: None,
        frames: None,
        nodes: Vec::new(),
        wires: Vec::new(),
        writes: Vec::new(),
        blocks: Vec::new(),
        includes: Vec::new(),
        sources: vec![Arc::clone(source)],
    };
    let mut problems = Vec::new();
    let mut current: Option<Block> = None;
    // Header statements written at all, even if malformed (those are reported where they are).
    let mut headers_seen = std::collections::BTreeSet::new();
    let mut offset = 0;
    for raw in source.text.split_inclusive('\n') {
        let base = offset;
        offset += raw.len();
        let text = raw.trim_end_matches(['\n', '\r']);
        let text = strip_comment(text);
        if text.trim().is_empty() {
            continue;
        }
        let indented = text.starts_with([' ', '\t']);
        if indented {
            let mut line = Line::new(text, base);
            if let Some(Block::Output(block)) = current.as_mut() {
                if let Err(p) = block_line(source, &mut line, block) {
                    problems.push(p);
                }
                continue;
            }
            if let Some(Block::Include(inc)) = current.as_mut() {
                if let Err(p) = override_line(source, &mut line, inc) {
                    problems.push(p);
                }
                continue;
            }
            let Some(Block::Node(node)) = current.as_mut() else {
                line.skip_ws();
                problems.push(
                    problem(source, Span::new(line.at(), base + text.len()), "an indented parameter line outside a node")
                        .help("parameter lines follow a node line `name = plugin.node`; other statements start at the beginning of the line"),
                );
                continue;
            };
            let Some(name) = line.ident() else {
                line.skip_ws();
                let at = line.at();
                problems.push(
                    problem(source, Span::new(at, at + 1), "expected a parameter name")
                        .label("expected `name = value`"),
                );
                continue;
            };
            if !line.eat("=") {
                let at = line.at();
                problems.push(
                    problem(
                        source,
                        Span::new(at, at + 1),
                        format!("expected `=` after the parameter name `{}`", name.value),
                    )
                    .label("expected `=`"),
                );
                continue;
            }
            let value_base = line.at();
            match parse_value(source, line.rest(), value_base) {
                Ok(value) => node.params.push(ParamLine {
                    name,
                    value,
                    replaces: false,
                }),
                Err(p) => problems.push(p),
            }
            continue;
        }
        close_block(&mut graph, current.take());
        let mut line = Line::new(text, base);
        if let Some(word) = text.split_whitespace().next() {
            headers_seen.insert(word.to_owned());
        }
        if let Err(p) = statement(source, &mut line, &mut graph, &mut current) {
            problems.push(p);
        }
    }
    close_block(&mut graph, current.take());
    let end = Span::new(0, 0);
    if graph.format.is_none() && !headers_seen.contains("format") {
        problems.push(
            problem(source, end, "the graph does not say its format version")
                .help(format!("start the file with `format {FORMAT_VERSION}`")),
        );
    } else if let Some(f) = &graph.format
        && f.value != FORMAT_VERSION
    {
        problems.push(
            problem(
                source,
                f.span,
                format!(
                    "format {} is not known to this heft (it reads format {FORMAT_VERSION})",
                    f.value
                ),
            )
            .label("unknown format"),
        );
    }
    if graph.rate.is_none() && !headers_seen.contains("rate") && !recipe {
        problems.push(problem(source, end, "the graph has no frame rate").help("add a line such as `rate 24 fps`"));
    }
    if graph.frames.is_none() && !headers_seen.contains("frames") && !recipe {
        problems.push(problem(source, end, "the graph has no frame range").help("add a line such as `frames 1..96`"));
    }
    (graph, problems)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse_ok(text: &str) -> GraphFile {
        let src = Source::new("t.graph", text);
        let (g, p) = parse(&src);
        assert!(p.is_empty(), "{p:?}");
        g
    }

    #[test]
    fn reads_every_statement() {
        let g = parse_ok(
            "format 1\nrate 24000/1001 fps # film\nframes -5..96\n\na = trajectory.ballistic\n  launch_time = 0.5 s\n  launch_velocity = (1, -2.5e-1, 3) m/s\n  k = 0.1 s: (0, 0, 1) m\n  mode = ring\n\na.position -> b.target\nwrite a.position\nwrite a.velocity as speed\n",
        );
        assert_eq!(g.rate.map(|r| r.value), Some((24000, 1001)));
        assert_eq!(g.frames.map(|r| r.value), Some((-5, 96)));
        assert_eq!(g.nodes.len(), 1);
        let n = &g.nodes[0];
        assert_eq!(n.ty.value, "trajectory.ballistic");
        assert_eq!(n.params.len(), 4);
        assert!(
            matches!(&n.params[1].value.value, Value::Vector { values, unit: Some(u), .. } if values == &[1.0, -0.25, 3.0] && u.value == "m/s")
        );
        assert!(matches!(&n.params[2].value.value, Value::Key { time, .. } if *time == 0.1));
        assert!(matches!(&n.params[3].value.value, Value::Word(w) if w == "ring"));
        assert_eq!(g.wires.len(), 1);
        assert_eq!(g.writes[1].name.as_ref().map(|n| n.value.as_str()), Some("speed"));
    }

    #[test]
    fn reads_a_review_block_whose_keyword_names_no_node() {
        let g = parse_ok(
            "format 1\nrate 24 fps\nframes 0..9\nreview \"r.html\"\n    body = odile\n    colliders = odile.colliders\n    braid.positions joints 17\n    frames = 2..8\n",
        );
        let b = &g.blocks[0];
        assert_eq!((b.kind, b.file.value.as_str()), (BlockKind::Review, "r.html"));
        assert_eq!(b.items.len(), 1);
        assert_eq!(b.items[0].chains.as_ref().map(|c| c.value), Some(17));
        let options: Vec<(&str, &Value)> = b
            .options
            .iter()
            .map(|o| (o.name.value.as_str(), &o.value.value))
            .collect();
        assert_eq!(
            options,
            vec![
                ("body", &Value::Word("odile".into())),
                (
                    "colliders",
                    &Value::Reference {
                        node: "odile".into(),
                        param: "colliders".into()
                    }
                ),
                ("frames", &Value::Text("2..8".into())),
            ]
        );
        let src = Source::new(
            "t.graph",
            "format 1\nrate 24 fps\nframes 0..9\nreview = trajectory.jump\nreview 3\n",
        );
        let (_, p) = parse(&src);
        let said: Vec<(String, &str)> = p.iter().map(|p| (p.location(), p.message.as_str())).collect();
        assert_eq!(
            said,
            vec![
                // `review` starts a statement, so it cannot name a node.
                (
                    "t.graph:4:8".to_owned(),
                    "expected a number, a vector `(x, y, z)`, a word or `node.param`"
                ),
                (
                    "t.graph:5:8".to_owned(),
                    "expected a quoted file name: `review \"name.html\"`"
                ),
            ]
        );
    }

    #[test]
    fn reports_every_bad_line_with_its_column() {
        let src = Source::new(
            "t.graph",
            "format 1\nrate 24 fps\nframes 1..10\nbogus line\na = x.y\n  v = (1, 2 m\nb.c -> \n",
        );
        let (_, p) = parse(&src);
        let at: Vec<String> = p.iter().map(|p| p.location()).collect();
        assert_eq!(at, vec!["t.graph:4:1", "t.graph:6:14", "t.graph:7:8"], "{p:?}");
    }

    #[test]
    fn a_dotted_word_is_another_node_s_parameter() {
        let src = Source::new("t.graph", String::new());
        let v = parse_value(&src, "odile.body_mass", 0).expect("parses");
        assert_eq!(
            v.value,
            Value::Reference {
                node: "odile".into(),
                param: "body_mass".into()
            }
        );
        let v = parse_value(&src, "pim_braid.segments", 0).expect("parses");
        assert!(
            matches!(v.value, Value::Reference { ref node, ref param } if node == "pim_braid" && param == "segments")
        );
        let v = parse_value(&src, "a.b.c", 0).expect("parses");
        assert!(matches!(v.value, Value::Reference { ref node, ref param } if node == "a.b" && param == "c"));
        assert!(matches!(
            parse_value(&src, "ring", 0).expect("parses").value,
            Value::Word(_)
        ));
        let e = parse_value(&src, "odile.", 0).expect_err("refused");
        assert_eq!(e.message, "expected a parameter name after `.`");
    }
}
