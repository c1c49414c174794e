//! Checking a parsed graph against the loaded plugins and turning it into a [`Plan`]:
//! node types resolved, parameters converted to SI and range-checked, wires type-checked,
//! cycles refused, output shapes known, evaluation order fixed. Every problem found is
//! reported, not only the first.

use std::collections::{BTreeMap, BTreeSet};
use std::sync::Arc;

use heft_node_sdk::host::Plugin;
use heft_node_sdk::{Dimension, ParamSpec, ParamType, ParamValue, PortKind, Shape, Timeline};

use crate::blocks::{self, PlannedBake, PlannedPlot, PlannedReview, ReviewShow};
use crate::diag::{Place, Problem, Source, Span};
use crate::graph::{BlockKind, OutputBlock};
use crate::graph::{GraphFile, ParamLine, PortRef, Spanned, UnitText, Value, parse_value};
use crate::registry::{NodeType, Provider, Registry, closest};
use crate::units;

/// What the command line changes in a graph.
#[derive(Debug, Clone, Default)]
pub struct Overrides {
    /// `node.param=VALUE`, in the order given; later ones win.
    pub set: Vec<String>,
    /// `--frames A..B`: replaces the graph's frame range.
    pub frames: Option<(i64, i64)>,
}

/// A node instance ready to evaluate.
#[derive(Debug, Clone)]
pub struct PlannedNode {
    /// Instance name.
    pub name: String,
    /// Its type.
    pub ty: NodeType,
    /// Parameter values in spec order, SI.
    pub params: Vec<ParamValue>,
    /// The same, encoded for the plugin boundary.
    pub params_bytes: Vec<u8>,
    /// For each input: the (node, output) feeding it, or `None` for an unconnected optional input.
    pub inputs: Vec<Option<(usize, usize)>>,
    /// Shape of each output.
    pub outputs: Vec<Shape>,
    /// For a host-side node, its outputs, read when the graph was checked.
    pub host_data: Option<Vec<Vec<f64>>>,
    /// Where the node is declared, `file:line:column` (a graph or a recipe).
    pub at: String,
}

/// The file format of a `write` line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WriteFormat {
    /// CSV: a header row, then one row per frame with every value of the output.
    Csv,
    /// Apache Parquet: a long table, one row per frame (per frame and point for points).
    Parquet,
}

impl WriteFormat {
    /// The format a `format` word names (see [`crate::graph::WRITE_FORMATS`]).
    pub fn from_name(name: &str) -> Option<WriteFormat> {
        match name {
            "csv" => Some(WriteFormat::Csv),
            "parquet" => Some(WriteFormat::Parquet),
            _ => None,
        }
    }
    /// The file name extension, without the dot.
    pub fn extension(self) -> &'static str {
        match self {
            WriteFormat::Csv => "csv",
            WriteFormat::Parquet => "parquet",
        }
    }
}

/// An output to write.
#[derive(Debug, Clone)]
pub struct PlannedWrite {
    /// Node index.
    pub node: usize,
    /// Output index.
    pub output: usize,
    /// File stem (without the extension).
    pub stem: String,
    /// The file format.
    pub format: WriteFormat,
    /// For the points of a strand node: joints per strand (its `segments` plus one), so that
    /// a long table can say which strand and joint each point is.
    pub chain: Option<usize>,
}

impl PlannedWrite {
    /// The file name in the output folder: the stem and the format's extension.
    pub fn file(&self) -> String {
        format!("{}.{}", self.stem, self.format.extension())
    }
}

/// A checked graph: everything needed to evaluate it.
#[derive(Debug, Clone)]
pub struct Plan {
    /// The graph file.
    pub source: Arc<Source>,
    /// The frames to evaluate.
    pub timeline: Timeline,
    /// Nodes in declaration order.
    pub nodes: Vec<PlannedNode>,
    /// Evaluation levels: every node's inputs come from earlier levels; nodes in one
    /// level are independent and may run in parallel.
    pub levels: Vec<Vec<usize>>,
    /// Outputs to write.
    pub writes: Vec<PlannedWrite>,
    /// glTF bakes to write.
    pub bakes: Vec<PlannedBake>,
    /// Plots to draw.
    pub plots: Vec<PlannedPlot>,
    /// Review pages to write.
    pub reviews: Vec<PlannedReview>,
}

/// The memory an evaluation of a plan holds (`eval::Schedule::footprint`): what it keeps whole
/// over every frame, and a window of the rest.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Footprint {
    /// Bytes of all outputs together.
    pub total: u128,
    /// The largest single output: (node, output, bytes).
    pub largest: Option<(usize, usize, u128)>,
}

fn si_text(v: f64, d: Dimension) -> String {
    let s = d.si_symbol();
    if s.is_empty() {
        format!("{v}")
    } else {
        format!("{v} {s}")
    }
}

fn range_text(min: f64, max: f64, d: Dimension) -> String {
    format!("{} to {}", si_text(min, d), si_text(max, d))
}

/// Applies a written unit for a parameter of dimension `dim`; returns the factor to SI.
/// `what` names the value in messages: "`launch_time`", "the time of a `key`".
fn unit_factor(
    source: &Arc<Source>,
    unit: &UnitText,
    dim: Dimension,
    what: &str,
    value_span: Span,
) -> Result<f64, Problem> {
    match unit {
        None if dim == Dimension::Dimensionless => Ok(1.0),
        None => Err(Problem::new(
            source,
            value_span,
            format!("{what} is {} and needs a unit", dim.describe()),
        )
        .label("no unit")
        .help(format!("write it with one of: {}", units::symbols_for(dim).join(", ")))),
        Some(u) => match units::lookup(&u.value) {
            None => Err(Problem::new(source, u.span, format!("unknown unit `{}`", u.value))
                .label("unknown unit")
                .help(format!(
                    "{what} is {}: use one of {}",
                    dim.describe(),
                    units::symbols_for(dim).join(", ")
                ))),
            Some((d, f)) if d == dim => Ok(f),
            Some((d, _)) => Err(Problem::new(
                source,
                u.span,
                format!("`{}` is {}, but {what} is {}", u.value, d.describe(), dim.describe()),
            )
            .label("wrong dimension")
            .help(format!("use one of: {}", units::symbols_for(dim).join(", ")))),
        },
    }
}

/// A vector's components in SI: each takes its own unit, or the one written after the vector.
/// A component without either may be a bare 0 (zero in any unit).
fn vector_si(
    source: &Arc<Source>,
    values: &[f64; 3],
    trailing: &UnitText,
    units: &[UnitText; 3],
    dim: Dimension,
    name: &str,
    span: Span,
) -> Result<[f64; 3], Problem> {
    let mut si = [0.0; 3];
    for k in 0..3 {
        let f = match (&units[k], trailing) {
            (Some(own), Some(_)) => {
                return Err(Problem::new(
                    source,
                    own.span,
                    format!("`{name}` gives a unit both here and after the vector"),
                )
                .label("second unit")
                .help("write `(x, y, z) unit`, or a unit with each component, not both"));
            }
            (Some(_), None) => unit_factor(source, &units[k], dim, &format!("`{name}`"), span)?,
            (None, Some(_)) => unit_factor(source, trailing, dim, &format!("`{name}`"), span)?,
            (None, None) if values[k] == 0.0 || units.iter().all(Option::is_none) => {
                unit_factor(source, &None, dim, &format!("`{name}`"), span)
                    .or_else(|p| if values[k] == 0.0 { Ok(1.0) } else { Err(p) })?
            }
            (None, None) => {
                return Err(
                    Problem::new(source, span, format!("a component of `{name}` has no unit"))
                        .label("no unit")
                        .help("give every non-zero component a unit, or one unit after the vector"),
                );
            }
        };
        si[k] = values[k] * f;
    }
    Ok(si)
}

/// A number too large to hold, at its place.
fn too_large(source: &Arc<Source>, span: Span, name: &str) -> Problem {
    Problem::new(
        source,
        span,
        format!("`{name}` holds a number beyond the largest heft can hold (about 1.8e308)"),
    )
    .label("too large")
}

/// Converts a written value to the parameter's SI value, checking type, unit and range.
pub fn convert(source: &Arc<Source>, value: &Spanned<Value>, spec: &ParamSpec) -> Result<ParamValue, Problem> {
    let name = &spec.name;
    let span = value.span;
    let mismatch = |want: &str| {
        Problem::new(source, span, format!("`{name}` takes {want}"))
            .label(format!("not {want}"))
            .help(format!("{name}: {}", spec.doc))
    };
    // A literal past the largest f64 (`1e309`) reads as infinity: refused, never carried on.
    let numbers: &[f64] = match &value.value {
        Value::Number { value, .. } => std::slice::from_ref(value),
        Value::Vector { values, .. } => values,
        Value::Key { time, values, .. } => {
            if !time.is_finite() {
                return Err(too_large(source, span, name));
            }
            values
        }
        Value::Word(_) | Value::Text(_) | Value::Reference { .. } => &[],
    };
    if numbers.iter().any(|v| !v.is_finite()) {
        return Err(too_large(source, span, name));
    }
    let finite = |p: ParamValue| -> Result<ParamValue, Problem> {
        let ok = match &p {
            ParamValue::Number(v) => v.is_finite(),
            ParamValue::Vec3(v) => v.iter().all(|c| c.is_finite()),
            ParamValue::Keys(k) => k.iter().all(|(t, v)| t.is_finite() && v.iter().all(|c| c.is_finite())),
            _ => true,
        };
        if ok { Ok(p) } else { Err(too_large(source, span, name)) }
    };
    match (&spec.ty, &value.value) {
        (ParamType::Number { dimension, min, max }, Value::Number { value: v, unit, .. }) => {
            let si = v * unit_factor(source, unit, *dimension, &format!("`{name}`"), span)?;
            if !(si >= *min && si <= *max) {
                return Err(Problem::new(
                    source,
                    span,
                    format!("`{name}` = {} is out of range", si_text(si, *dimension)),
                )
                .label("out of range")
                .help(format!("valid range: {}", range_text(*min, *max, *dimension))));
            }
            Ok(ParamValue::Number(si))
        }
        (ParamType::Number { dimension, .. }, _) => Err(mismatch(&format!("a number ({})", dimension.describe()))),
        (ParamType::Integer { min, max }, Value::Number { value: v, whole, unit }) => {
            if let Some(u) = unit {
                return Err(
                    Problem::new(source, u.span, format!("`{name}` is a count and takes no unit"))
                        .label("unexpected unit"),
                );
            }
            if !whole || v.abs() > 9.0e15 {
                return Err(mismatch("a whole number"));
            }
            let i = *v as i64;
            if i < *min || i > *max {
                return Err(Problem::new(source, span, format!("`{name}` = {i} is out of range"))
                    .label("out of range")
                    .help(format!("valid range: {min} to {max}")));
            }
            Ok(ParamValue::Integer(i))
        }
        (ParamType::Integer { .. }, _) => Err(mismatch("a whole number")),
        (ParamType::Bool, Value::Word(w)) => match w.as_str() {
            "true" | "on" | "yes" => Ok(ParamValue::Bool(true)),
            "false" | "off" | "no" => Ok(ParamValue::Bool(false)),
            _ => Err(mismatch("`true` or `false`")),
        },
        (ParamType::Bool, _) => Err(mismatch("`true` or `false`")),
        (ParamType::Choice { options }, Value::Word(w)) => {
            if options.contains(w) {
                Ok(ParamValue::Choice(w.clone()))
            } else {
                let mut p = Problem::new(source, span, format!("`{w}` is not an option of `{name}`"))
                    .label("unknown option")
                    .help(format!("options: {}", options.join(", ")));
                if let Some(c) = closest(w, options.iter().map(String::as_str)) {
                    p = p.help(format!("did you mean `{c}`? options: {}", options.join(", ")));
                }
                Err(p)
            }
        }
        (ParamType::Choice { options }, _) => Err(mismatch(&format!("one of {}", options.join(", ")))),
        (ParamType::Vec3 { dimension, min, max }, Value::Vector { values, unit, units }) => {
            let si = vector_si(source, values, unit, units, *dimension, name, span)?;
            if let Some(bad) = si.iter().find(|v| !(**v >= *min && **v <= *max)) {
                return Err(Problem::new(
                    source,
                    span,
                    format!("`{name}` has a component {} out of range", si_text(*bad, *dimension)),
                )
                .label("out of range")
                .help(format!(
                    "valid range of each component: {}",
                    range_text(*min, *max, *dimension)
                )));
            }
            Ok(ParamValue::Vec3(si))
        }
        (ParamType::Vec3 { dimension, .. }, _) => {
            Err(mismatch(&format!("a vector `(x, y, z)` ({})", dimension.describe())))
        }
        (
            ParamType::Keys { dimension, .. },
            Value::Key {
                time,
                time_unit,
                values,
                unit,
                units,
            },
        ) => {
            let tf = unit_factor(
                source,
                time_unit,
                Dimension::Time,
                &format!("the time of a `{name}`"),
                span,
            )?;
            let si = vector_si(source, values, unit, units, *dimension, name, span)?;
            finite(ParamValue::Keys(vec![(time * tf, si)]))
        }
        (ParamType::Text, Value::Text(t) | Value::Word(t)) => Ok(ParamValue::Text(t.clone())),
        (ParamType::Text, _) => Err(mismatch("a quoted text")),
        (ParamType::Keys { dimension, .. }, _) => Err(mismatch(&format!(
            "keys `time: (x, y, z) unit` ({})",
            dimension.describe()
        ))),
    }
}

/// A parameter line with the source it was written in (the graph or a `--set`).
struct Written<'a> {
    source: Arc<Source>,
    line: &'a ParamLine,
}

fn parse_overrides(set: &[String], problems: &mut Vec<Problem>) -> Vec<(Arc<Source>, Spanned<String>, ParamLine)> {
    let mut out = Vec::new();
    for (i, text) in set.iter().enumerate() {
        let source = Source::new(format!("--set {}", i + 1), text.clone());
        let Some(eq) = text.find('=') else {
            problems
                .push(Problem::new(&source, Span::new(0, text.len()), "expected `node.param=VALUE`").label("no `=`"));
            continue;
        };
        let target = &text[..eq];
        let Some(dot) = target.find('.') else {
            problems.push(Problem::new(&source, Span::new(0, eq), "expected `node.param` before `=`").label("no `.`"));
            continue;
        };
        let node = target[..dot].trim();
        let param = target[dot + 1..].trim();
        let raw = text[eq + 1..].trim();
        // On the command line a text (a file path) may go without quotes: `plate.file=trial3.csv`.
        let bare_text = !raw.is_empty()
            && raw.starts_with(|c: char| c.is_alphabetic() || c == '/' || c == '.')
            && !raw.contains(['"', '(', ' ']);
        let parsed = parse_value(&source, &text[eq + 1..], eq + 1).or_else(|p| {
            if bare_text {
                let start = eq + 1 + (text[eq + 1..].len() - text[eq + 1..].trim_start().len());
                Ok(Spanned {
                    value: Value::Text(raw.to_owned()),
                    span: Span::new(start, start + raw.len()),
                })
            } else {
                Err(p)
            }
        });
        match parsed {
            Ok(value) => out.push((
                Arc::clone(&source),
                Spanned {
                    value: node.to_owned(),
                    span: Span::new(0, dot),
                },
                ParamLine {
                    name: Spanned {
                        value: param.to_owned(),
                        span: Span::new(dot + 1, eq),
                    },
                    value,
                    replaces: true,
                },
            )),
            Err(p) => problems.push(p),
        }
    }
    out
}

/// The most joints one bake file holds: far more than any hair or cloth rig a package plays.
pub const MAX_BAKE_JOINTS: u64 = 65_536;
/// The most keys (joints times frames) one bake file holds: about 1 GiB of glTF data.
pub const MAX_BAKE_KEYS: u64 = 32_000_000;

/// The most frames one run evaluates.
pub const MAX_FRAMES: u64 = 10_000_000;

struct NodeState {
    ty: Option<NodeType>,
    params: Vec<ParamValue>,
    ok: bool,
}

/// The nodes declared before the one being checked, whose parameters are final: what a
/// `node.param` value may name.
struct Earlier<'a> {
    states: &'a [NodeState],
    by_name: &'a BTreeMap<&'a str, usize>,
}

impl Earlier<'_> {
    /// The node being checked: the one after the earlier ones.
    fn this(&self) -> usize {
        self.states.len()
    }
}

impl Earlier<'_> {
    /// The value of `node.param` for a parameter of `spec`: the same kind and dimension, within
    /// the parameter's own range.
    fn value(
        &self,
        source: &Arc<Source>,
        span: Span,
        node: &str,
        param: &str,
        spec: &ParamSpec,
    ) -> Result<ParamValue, Problem> {
        let name = &spec.name;
        let Some(&j) = self.by_name.get(node) else {
            let mut p =
                Problem::new(source, span, format!("no node named `{node}` in the graph")).label("unknown node");
            if let Some(c) = closest(node, self.by_name.keys().copied()) {
                p = p.help(format!("did you mean `{c}`?"));
            }
            return Err(p);
        };
        if j == self.this() {
            return Err(Problem::new(
                source,
                span,
                format!("`{node}.{param}` is this node's own parameter: write `{name}`'s value"),
            )
            .label("its own parameter"));
        }
        let Some(state) = self.states.get(j) else {
            return Err(Problem::new(
                source,
                span,
                format!(
                    "`{node}` is declared after this node: `{name}` can take the value of a node declared before it"
                ),
            )
            .label("declared later")
            .help(format!("move `{node}` above this node")));
        };
        let Some(ty) = &state.ty else {
            return Err(
                Problem::new(source, span, format!("`{node}` has problems of its own (above)"))
                    .label("cannot take its value"),
            );
        };
        let theirs = ty.spec();
        let Some(k) = theirs.params.iter().position(|p| p.name == param) else {
            let mut p = Problem::new(source, span, format!("`{}` has no parameter `{param}`", ty.full_name))
                .label("unknown parameter");
            if let Some(c) = closest(param, theirs.params.iter().map(|p| p.name.as_str())) {
                p = p.help(format!("did you mean `{node}.{c}`?"));
            }
            return Err(p);
        };
        let Some(value) = state.params.get(k) else {
            return Err(
                Problem::new(source, span, format!("`{node}` has problems of its own (above)"))
                    .label("cannot take its value"),
            );
        };
        let kind = |t: &ParamType| match t {
            ParamType::Number { dimension, .. } => format!("a number ({})", dimension.describe()),
            ParamType::Vec3 { dimension, .. } => format!("a vector ({})", dimension.describe()),
            ParamType::Integer { .. } => "a whole number".to_owned(),
            ParamType::Bool => "`true` or `false`".to_owned(),
            ParamType::Choice { .. } => "a choice".to_owned(),
            ParamType::Text => "a text".to_owned(),
            ParamType::Keys { dimension, .. } => format!("keys ({})", dimension.describe()),
        };
        let same = match (&spec.ty, &theirs.params[k].ty) {
            (ParamType::Number { dimension: a, .. }, ParamType::Number { dimension: b, .. })
            | (ParamType::Vec3 { dimension: a, .. }, ParamType::Vec3 { dimension: b, .. })
            | (ParamType::Keys { dimension: a, .. }, ParamType::Keys { dimension: b, .. }) => a == b,
            (ParamType::Integer { .. }, ParamType::Integer { .. })
            | (ParamType::Bool, ParamType::Bool)
            | (ParamType::Text, ParamType::Text)
            | (ParamType::Choice { .. }, ParamType::Choice { .. }) => true,
            _ => false,
        };
        if !same {
            return Err(Problem::new(
                source,
                span,
                format!(
                    "`{node}.{param}` is {}, but `{name}` takes {}",
                    kind(&theirs.params[k].ty),
                    kind(&spec.ty)
                ),
            )
            .label("not the same kind"));
        }
        let out_of_range = |what: String, range: String| {
            Problem::new(
                source,
                span,
                format!("`{name}` = `{node}.{param}` = {what} is out of range"),
            )
            .label("out of range")
            .help(format!("valid range: {range}"))
        };
        match (&spec.ty, value) {
            (ParamType::Number { dimension, min, max }, ParamValue::Number(v)) if !(v >= min && v <= max) => Err(
                out_of_range(si_text(*v, *dimension), range_text(*min, *max, *dimension)),
            ),
            (ParamType::Integer { min, max }, ParamValue::Integer(v)) if v < min || v > max => {
                Err(out_of_range(v.to_string(), format!("{min} to {max}")))
            }
            (ParamType::Choice { options }, ParamValue::Choice(w)) if !options.contains(w) => Err(Problem::new(
                source,
                span,
                format!("`{node}.{param}` = `{w}` is not an option of `{name}`"),
            )
            .label("unknown option")
            .help(format!("options: {}", options.join(", ")))),
            (ParamType::Vec3 { min, max, dimension }, ParamValue::Vec3(v))
                if v.iter().any(|c| !(c >= min && c <= max)) =>
            {
                Err(out_of_range(
                    format!("({}, {}, {})", v[0], v[1], v[2]),
                    range_text(*min, *max, *dimension),
                ))
            }
            _ => Ok(value.clone()),
        }
    }
}

/// Checks a parsed graph (with the problems its parse found) and builds a plan.
pub fn check(
    graph: &GraphFile,
    parse_problems: Vec<Problem>,
    registry: &Registry,
    overrides: &Overrides,
) -> Result<Plan, Vec<Problem>> {
    let src = &graph.source;
    let srcs = &graph.sources;
    let mut problems = parse_problems;
    let place = |span: Span| Place {
        source: Arc::clone(srcs.get(usize::from(span.file)).unwrap_or(src)),
        span,
    };

    // Timeline.
    let (rate_num, rate_den) = graph.rate.as_ref().map_or((24, 1), |r| r.value);
    let (first, last) = overrides
        .frames
        .or(graph.frames.as_ref().map(|f| f.value))
        .unwrap_or((1, 1));
    // The frame count in i128: any two i64 frames give a count without overflow.
    let count = (i128::from(last) - i128::from(first) + 1).max(0);
    if count > i128::from(MAX_FRAMES) {
        let (source, at, whose) = match (&overrides.frames, &graph.frames) {
            (None, Some(f)) => (Arc::clone(src), f.span, "the frame range"),
            _ => {
                let text = format!("{first}..{last}");
                let len = text.len();
                (Source::new("--frames", text), Span::new(0, len), "`--frames`")
            }
        };
        problems.push(
            Problem::new(&source, at, format!("{whose} {first}..{last} holds {count} frames, more than one run evaluates"))
                .label("too many frames")
                .help(format!(
                    "a run evaluates at most {MAX_FRAMES} frames (about 2.8 hours at 1000 fps); split the range over several runs"
                )),
        );
    }
    let timeline = Timeline {
        start_frame: first,
        frame_count: count.clamp(0, i128::from(MAX_FRAMES)) as u64,
        rate_num,
        rate_den,
    };

    // Node names and types.
    let mut by_name: BTreeMap<&str, usize> = BTreeMap::new();
    let mut states: Vec<NodeState> = Vec::with_capacity(graph.nodes.len());
    // An ambiguous type is said once, at its first use, with the count of the others.
    let mut ambiguous: BTreeMap<&str, (usize, usize)> = BTreeMap::new();
    for (i, decl) in graph.nodes.iter().enumerate() {
        let mut state = NodeState {
            ty: None,
            params: Vec::new(),
            ok: true,
        };
        if let Some(&first) = by_name.get(decl.name.value.as_str()) {
            problems.push(
                Problem::at(
                    srcs,
                    decl.name.span,
                    format!("a node named `{}` is declared twice", decl.name.value),
                )
                .label("second declaration")
                .also(place(graph.nodes[first].name.span), "first declared here"),
            );
            state.ok = false;
        } else {
            by_name.insert(&decl.name.value, i);
        }
        match registry.lookup(&decl.ty.value) {
            Ok(Some(t)) => state.ty = Some(t.clone()),
            Ok(None) => {
                let mut p = Problem::at(srcs, decl.ty.span, format!("unknown node type `{}`", decl.ty.value))
                    .label("unknown node type");
                if let Some(c) = registry.closest(&decl.ty.value) {
                    p = p.help(format!("did you mean `{c}`?"));
                } else if registry.failures().is_empty() {
                    p = p.help("`heft nodes` lists the node types of the loaded plugins");
                }
                if !registry.failures().is_empty() {
                    let why: Vec<String> = registry.failures().iter().map(ToString::to_string).collect();
                    let prior = p.help.take().map(|h| format!("{h}\n")).unwrap_or_default();
                    p = p.help(format!("{prior}some plugin files failed to load:\n{}", why.join("\n")));
                }
                problems.push(p);
                state.ok = false;
            }
            Err(_) if ambiguous.contains_key(decl.ty.value.as_str()) => {
                if let Some(e) = ambiguous.get_mut(decl.ty.value.as_str()) {
                    e.1 += 1;
                }
                state.ok = false;
            }
            Err(many) => {
                let files: Vec<String> = many.iter().map(NodeType::origin).collect();
                ambiguous.insert(&decl.ty.value, (problems.len(), 0));
                problems.push(
                    Problem::at(
                        srcs,
                        decl.ty.span,
                        format!("node type `{}` is offered by more than one plugin", decl.ty.value),
                    )
                    .label("ambiguous")
                    .help(format!(
                        "offered by: {}; remove one from the plugin path",
                        files.join(" and ")
                    )),
                );
                state.ok = false;
            }
        }
        states.push(state);
    }
    for (k, others) in ambiguous.into_values() {
        if others > 0 {
            problems[k].message += &format!(" (and {others} more nodes of this type)");
        }
    }

    // Parameters: the graph's lines, then the overrides.
    let set = parse_overrides(&overrides.set, &mut problems);
    let mut written: Vec<Vec<Written<'_>>> = graph
        .nodes
        .iter()
        .map(|d| {
            d.params
                .iter()
                .map(|line| Written {
                    source: Arc::clone(srcs.get(usize::from(line.name.span.file)).unwrap_or(src)),
                    line,
                })
                .collect()
        })
        .collect();
    for (source, node, line) in &set {
        match by_name.get(node.value.as_str()) {
            Some(&i) => written[i].push(Written {
                source: Arc::clone(source),
                line,
            }),
            None => {
                let mut p = Problem::new(
                    source,
                    node.span,
                    format!("no node named `{}` in the graph", node.value),
                )
                .label("unknown node");
                if let Some(c) = closest(&node.value, by_name.keys().copied()) {
                    p = p.help(format!("did you mean `{c}`?"));
                }
                problems.push(p);
            }
        }
    }
    for (i, decl) in graph.nodes.iter().enumerate() {
        let Some(ty) = states[i].ty.clone() else { continue };
        let spec = ty.spec();
        let mut values: Vec<Option<ParamValue>> = vec![None; spec.params.len()];
        let mut from_graph: Vec<Option<Span>> = vec![None; spec.params.len()];
        let mut replaced_keys: BTreeSet<usize> = BTreeSet::new();
        for w in &written[i] {
            let name = &w.line.name;
            let Some(k) = spec.params.iter().position(|p| p.name == name.value) else {
                let mut p = Problem::new(
                    &w.source,
                    name.span,
                    format!("`{}` has no parameter `{}`", decl.ty.value, name.value),
                )
                .label("unknown parameter");
                if let Some(c) = closest(&name.value, spec.params.iter().map(|p| p.name.as_str())) {
                    p = p.help(format!("did you mean `{c}`?"));
                } else {
                    let all: Vec<&str> = spec.params.iter().map(|p| p.name.as_str()).collect();
                    p = p.help(format!("parameters: {}", all.join(", ")));
                }
                problems.push(p);
                states[i].ok = false;
                continue;
            };
            let is_override = w.line.replaces;
            let converted = match &w.line.value.value {
                // A text parameter (a file name) takes `name.ext` as the text it reads as.
                Value::Reference { node, param } if spec.params[k].ty == ParamType::Text => {
                    Ok(ParamValue::Text(format!("{node}.{param}")))
                }
                Value::Reference { node, param } => {
                    let earlier = Earlier {
                        states: &states[..i],
                        by_name: &by_name,
                    };
                    earlier.value(&w.source, w.line.value.span, node, param, &spec.params[k])
                }
                _ => convert(&w.source, &w.line.value, &spec.params[k]),
            };
            match converted {
                Ok(ParamValue::Keys(mut new)) => {
                    // Key lines append. The first overriding key line (a recipe's override, a
                    // `--set`) starts a new list, and later overriding lines append to it.
                    let fresh = is_override && replaced_keys.insert(k);
                    let old = values[k].take();
                    if let (false, Some(ParamValue::Keys(old))) = (fresh, old) {
                        let mut all = old;
                        if let (Some(prev), Some(next)) = (all.last(), new.first())
                            && next.0 <= prev.0
                        {
                            problems.push(
                                Problem::new(
                                    &w.source,
                                    w.line.value.span,
                                    "key times must increase from line to line",
                                )
                                .label(format!("{} s is not after {} s", next.0, prev.0)),
                            );
                            states[i].ok = false;
                        }
                        all.append(&mut new);
                        new = all;
                    }
                    values[k] = Some(ParamValue::Keys(new));
                }
                Ok(v) => {
                    if let (false, Some(first)) = (is_override, from_graph[k]) {
                        problems.push(
                            Problem::new(&w.source, name.span, format!("`{}` is set twice", name.value))
                                .label("set again")
                                .also(place(first), "first set here"),
                        );
                        states[i].ok = false;
                    }
                    if !is_override {
                        from_graph[k] = Some(name.span);
                    }
                    values[k] = Some(v);
                }
                Err(p) => {
                    problems.push(p);
                    states[i].ok = false;
                }
            }
        }
        let mut complete = Vec::with_capacity(spec.params.len());
        let given: Vec<bool> = values.iter().map(Option::is_some).collect();
        for (k, p) in spec.params.iter().enumerate() {
            match values[k].take().or_else(|| p.default.clone()) {
                Some(v) => {
                    if let (ParamType::Keys { min_keys, .. }, ParamValue::Keys(keys)) = (&p.ty, &v)
                        && keys.len() < *min_keys
                    {
                        problems.push(
                            Problem::at(
                                srcs,
                                decl.name.span,
                                format!(
                                    "`{}` needs at least {min_keys} `{}` lines, has {}",
                                    decl.name.value,
                                    p.name,
                                    keys.len()
                                ),
                            )
                            .label("too few keys"),
                        );
                        states[i].ok = false;
                    }
                    complete.push(v);
                }
                None => {
                    problems.push(
                        Problem::at(
                            srcs,
                            decl.name.span,
                            format!("`{}` needs a value for `{}`", decl.name.value, p.name),
                        )
                        .label("missing parameter")
                        .help(format!(
                            "add an indented line `{} = ...` under the node: {}",
                            p.name, p.doc
                        )),
                    );
                    states[i].ok = false;
                }
            }
        }
        // Defaults that scale with another parameter (a body's lengths with its height), from
        // that parameter's value, given or defaulted.
        if complete.len() == spec.params.len() {
            for (k, p) in spec.params.iter().enumerate() {
                let (Some((other, factor)), false) = (&p.scaled_default, given[k]) else {
                    continue;
                };
                let base = spec.params.iter().position(|q| &q.name == other).map(|o| &complete[o]);
                let (Some(ParamValue::Number(x)), ParamType::Number { dimension, min, max }) = (base, &p.ty) else {
                    continue;
                };
                let value = factor * x;
                if !(*min..=*max).contains(&value) {
                    problems.push(
                        Problem::at(
                            srcs,
                            decl.name.span,
                            format!(
                                "`{}` defaults to {factor} x `{other}` = {}, outside its range {} to {}",
                                p.name,
                                si_text(value, *dimension),
                                si_text(*min, *dimension),
                                si_text(*max, *dimension)
                            ),
                        )
                        .label(format!("`{}` of this node", p.name))
                        .help(format!("set `{}` under the node, or change `{other}`", p.name)),
                    );
                    states[i].ok = false;
                } else {
                    complete[k] = ParamValue::Number(value);
                }
            }
        }
        states[i].params = complete;
    }

    // Host nodes read their files now, before the wires are checked: a character's outputs
    // are the nodes its file holds.
    // A track's file is relative to the file that declares the track (a graph or a recipe).
    let dir_of = |span: Span| {
        let name = &srcs.get(usize::from(span.file)).unwrap_or(src).name;
        std::path::Path::new(name)
            .parent()
            .map(std::path::Path::to_path_buf)
            .unwrap_or_default()
    };
    let mut host_data: Vec<Option<Vec<Vec<f64>>>> = vec![None; graph.nodes.len()];
    for (i, decl) in graph.nodes.iter().enumerate() {
        let (Some(ty), true) = (states[i].ty.clone(), states[i].ok) else {
            continue;
        };
        let Provider::Host(h) = &ty.provider else { continue };
        // A file given on the command line (`--set plate.file=x.csv`) is relative to the
        // folder heft runs in, as any path typed in a shell; one in a graph to that graph.
        let mut params = states[i].params.clone();
        let from_shell = written[i]
            .iter()
            .rev()
            .find(|w| w.line.name.value == "file")
            .is_some_and(|w| w.source.name.starts_with("--set"));
        if from_shell
            && let Some(k) = ty.spec().params.iter().position(|p| p.name == "file")
            && let ParamValue::Text(t) = &params[k]
            && std::path::Path::new(t).is_relative()
            && let Ok(here) = std::env::current_dir()
        {
            params[k] = ParamValue::Text(here.join(t).display().to_string());
        }
        match h.load(&params, &dir_of(decl.name.span), timeline) {
            Ok(loaded) => {
                if let Some(instance) = loaded.instance {
                    states[i].ty = Some(NodeType {
                        instance: Some(Arc::new(instance)),
                        ..ty
                    });
                }
                host_data[i] = Some(loaded.outputs);
            }
            Err(e) => {
                // Point at the line that set the parameter, or at the node.
                let at = written[i].iter().rev().find(|w| w.line.name.value == e.param);
                let mut p = match at {
                    Some(w) => Problem::new(&w.source, w.line.value.span, e.message),
                    None => Problem::at(srcs, decl.name.span, e.message),
                }
                .label(format!("`{}` of this node", e.param));
                if let Some(h) = e.help {
                    p = p.help(h);
                }
                problems.push(p);
                states[i].ok = false;
                // Its outputs are unknown: wires from it are not checked further.
                states[i].ty = None;
            }
        }
    }

    // Wires.
    let n = graph.nodes.len();
    let mut inputs: Vec<Vec<Option<(usize, usize)>>> = states
        .iter()
        .map(|s| {
            s.ty.as_ref()
                .map_or_else(Vec::new, |t| vec![None; t.spec().inputs.len()])
        })
        .collect();
    let mut driver_wire: BTreeMap<(usize, usize), usize> = BTreeMap::new();
    // Inputs with a wire that was refused: not reported again as unconnected.
    let mut attempted: BTreeSet<(usize, usize)> = BTreeSet::new();
    let mut edges: Vec<(usize, usize, usize)> = Vec::new(); // (from node, to node, wire index)
    // The node a `node.port` names, or the problem saying there is none.
    let node_index = |r: &PortRef| -> Result<usize, Problem> {
        by_name.get(r.node.value.as_str()).copied().ok_or_else(|| {
            let mut p =
                Problem::at(srcs, r.node.span, format!("no node named `{}`", r.node.value)).label("unknown node");
            if let Some(c) = closest(&r.node.value, by_name.keys().copied()) {
                p = p.help(format!("did you mean `{c}`?"));
            }
            p
        })
    };
    let resolve_node = |r: &PortRef, problems: &mut Vec<Problem>| -> Option<usize> {
        node_index(r).map_err(|p| problems.push(p)).ok()
    };
    let port_problem = |r: &PortRef, ty: &NodeType, output: bool| {
        let spec = ty.spec();
        if let Some((_, why)) = ty
            .instance
            .as_ref()
            .and_then(|i| i.unusable.iter().find(|(name, _)| *name == r.port.value))
        {
            return Problem::at(srcs, r.port.span, why.clone()).label("cannot be used");
        }
        let (want, other) = if output {
            (&spec.outputs, &spec.inputs)
        } else {
            (&spec.inputs, &spec.outputs)
        };
        let side = if output { "output" } else { "input" };
        let mut p = Problem::at(
            srcs,
            r.port.span,
            format!(
                "`{}` ({}) has no {side} port `{}`",
                r.node.value, ty.full_name, r.port.value
            ),
        )
        .label(format!("unknown {side}"));
        if other.iter().any(|o| o.name == r.port.value) {
            let other_side = if output { "an input" } else { "an output" };
            p = p.help(format!(
                "`{}` is {other_side}; wires run from an output to an input",
                r.port.value
            ));
        } else if let Some(c) = closest(&r.port.value, want.iter().map(|o| o.name.as_str())) {
            p = p.help(format!("did you mean `{c}`?"));
        } else {
            let all: Vec<&str> = want.iter().map(|o| o.name.as_str()).collect();
            p = p.help(format!("{side}s: {}", all.join(", ")));
        }
        p
    };
    for (w, wire) in graph.wires.iter().enumerate() {
        let a = resolve_node(&wire.from, &mut problems);
        let b = resolve_node(&wire.to, &mut problems);
        let (Some(a), Some(b)) = (a, b) else { continue };
        let (Some(ta), Some(tb)) = (states[a].ty.clone(), states[b].ty.clone()) else {
            continue;
        };
        let out_k = ta.spec().outputs.iter().position(|p| p.name == wire.from.port.value);
        let in_k = tb.spec().inputs.iter().position(|p| p.name == wire.to.port.value);
        if out_k.is_none() {
            problems.push(port_problem(&wire.from, &ta, true));
        }
        if in_k.is_none() {
            problems.push(port_problem(&wire.to, &tb, false));
        }
        let (Some(ok), Some(ik)) = (out_k, in_k) else { continue };
        let (op, ip) = (&ta.spec().outputs[ok], &tb.spec().inputs[ik]);
        if op.kind != ip.kind {
            problems.push(
                Problem::at(
                    srcs,
                    wire.from.span().to(wire.to.span()),
                    format!(
                        "`{}` is {} but `{}` takes {}",
                        wire.from.text(),
                        op.kind.name(),
                        wire.to.text(),
                        ip.kind.name()
                    ),
                )
                .label("kind mismatch"),
            );
            attempted.insert((b, ik));
            states[b].ok = false;
            continue;
        }
        if op.dimension != ip.dimension && ip.dimension != Dimension::Dimensionless {
            problems.push(
                Problem::at(
                    srcs,
                    wire.from.span().to(wire.to.span()),
                    format!(
                        "`{}` carries {} ({}) but `{}` takes {} ({})",
                        wire.from.text(),
                        op.dimension.describe(),
                        op.dimension.si_symbol(),
                        wire.to.text(),
                        ip.dimension.describe(),
                        ip.dimension.si_symbol()
                    ),
                )
                .label("dimension mismatch"),
            );
            attempted.insert((b, ik));
            states[b].ok = false;
            continue;
        }
        if let Some(&first) = driver_wire.get(&(b, ik)) {
            problems.push(
                Problem::at(
                    srcs,
                    wire.to.span(),
                    format!("input `{}` is driven twice", wire.to.text()),
                )
                .label("second driver")
                .also(place(graph.wires[first].to.span()), "first driven here")
                .help("an input takes exactly one wire"),
            );
            continue;
        }
        driver_wire.insert((b, ik), w);
        inputs[b][ik] = Some((a, ok));
        edges.push((a, b, w));
    }
    for (i, decl) in graph.nodes.iter().enumerate() {
        let Some(ty) = states[i].ty.clone() else { continue };
        for (k, port) in ty.spec().inputs.iter().enumerate() {
            if !port.optional && inputs[i][k].is_none() && !attempted.contains(&(i, k)) {
                problems.push(
                    Problem::at(
                        srcs,
                        decl.name.span,
                        format!("input `{}.{}` is not connected", decl.name.value, port.name),
                    )
                    .label("unconnected input")
                    .help(format!(
                        "add a wire `some_node.output -> {}.{}` ({}: {})",
                        decl.name.value,
                        port.name,
                        port.kind.name(),
                        port.doc
                    )),
                );
                states[i].ok = false;
            }
        }
    }

    // Order (Kahn); whatever is left over lies on or behind a cycle.
    let mut indegree = vec![0usize; n];
    let mut outgoing: Vec<Vec<usize>> = vec![Vec::new(); n];
    for &(a, b, _) in &edges {
        indegree[b] += 1;
        outgoing[a].push(b);
    }
    let mut level_of = vec![usize::MAX; n];
    let mut current: Vec<usize> = (0..n).filter(|&i| indegree[i] == 0).collect();
    let mut levels: Vec<Vec<usize>> = Vec::new();
    while !current.is_empty() {
        let mut next = BTreeSet::new();
        for &i in &current {
            level_of[i] = levels.len();
            for &j in &outgoing[i] {
                indegree[j] -= 1;
                if indegree[j] == 0 {
                    next.insert(j);
                }
            }
        }
        levels.push(current);
        current = next.into_iter().collect();
    }
    // Every distinct cycle among the nodes left over, each reported once.
    let mut reported: BTreeSet<Vec<usize>> = BTreeSet::new();
    for start in (0..n).filter(|&i| level_of[i] == usize::MAX) {
        let wires_on_cycle = cycle_through_drivers(start, &edges, &level_of);
        let mut members: Vec<usize> = wires_on_cycle
            .iter()
            .map(|&w| edges.iter().find(|e| e.2 == w).map_or(0, |e| e.1))
            .collect();
        members.sort_unstable();
        if wires_on_cycle.is_empty() || !reported.insert(members) {
            continue;
        }
        let text: Vec<String> = wires_on_cycle
            .iter()
            .map(|&w| format!("{} -> {}", graph.wires[w].from.text(), graph.wires[w].to.text()))
            .collect();
        let span_of = |w: usize| graph.wires[w].from.span().to(graph.wires[w].to.span());
        let mut p = Problem::at(
            srcs,
            span_of(wires_on_cycle[0]),
            format!("the graph has a cycle: {}", text.join(", then ")),
        )
        .label("this wire closes a loop")
        .help("a node cannot depend on its own outputs; remove one of these wires");
        for &w in wires_on_cycle.iter().skip(1) {
            p = p.also(place(span_of(w)), "on the cycle");
        }
        problems.push(p);
    }

    // Output shapes, in order.
    let mut shapes: Vec<Option<Vec<Shape>>> = vec![None; n];
    let mut params_bytes: Vec<Vec<u8>> = vec![Vec::new(); n];
    for level in &levels {
        for &i in level {
            let (Some(ty), true) = (&states[i].ty, states[i].ok) else {
                continue;
            };
            let spec = ty.spec();
            let mut widths = Vec::with_capacity(spec.inputs.len());
            let mut inputs_ok = true;
            for (k, port) in spec.inputs.iter().enumerate() {
                match inputs[i][k] {
                    None => widths.push(0),
                    Some((a, ok)) => match &shapes[a] {
                        Some(s) => {
                            let shape = s[ok];
                            if let (PortKind::Points, Some(need)) = (port.kind, port.points)
                                && shape.points != need
                            {
                                let w = driver_wire[&(i, k)];
                                problems.push(
                                    Problem::at(
                                        srcs,
                                        graph.wires[w].from.span().to(graph.wires[w].to.span()),
                                        format!(
                                            "`{}` carries {} but `{}` takes {need} points",
                                            graph.wires[w].from.text(),
                                            shape,
                                            graph.wires[w].to.text()
                                        ),
                                    )
                                    .label("shape mismatch"),
                                );
                                inputs_ok = false;
                            }
                            widths.push(shape.width());
                        }
                        None => inputs_ok = false,
                    },
                }
            }
            if !inputs_ok {
                continue;
            }
            let bytes = match Plugin::encode_params(&states[i].params) {
                Ok(b) => b,
                Err(e) => {
                    problems.push(Problem::at(
                        srcs,
                        graph.nodes[i].name.span,
                        format!("cannot encode the parameters: {e}"),
                    ));
                    continue;
                }
            };
            match &ty.provider {
                Provider::Host(_) => {
                    // Read above; a host node that failed to read has no type here.
                    shapes[i] = Some(spec.outputs.iter().map(|o| Shape::of(o.kind)).collect());
                }
                Provider::Plugin { plugin, index } => {
                    match plugin
                        .plugin
                        .output_points(*index, &bytes, timeline, &widths, spec.outputs.len())
                    {
                        Ok(points) => {
                            shapes[i] = Some(
                                spec.outputs
                                    .iter()
                                    .zip(points)
                                    .map(|(o, p)| match o.kind {
                                        PortKind::Points => Shape::points(p),
                                        k => Shape::of(k),
                                    })
                                    .collect(),
                            );
                        }
                        Err(e) => problems.push(
                            Problem::at(
                                srcs,
                                graph.nodes[i].name.span,
                                format!("node `{}` cannot size its outputs: {e}", graph.nodes[i].name.value),
                            )
                            .label("this node"),
                        ),
                    }
                    // The node's own check of its parameters, inputs and timeline: each
                    // problem at the line of the parameter it names, or at the node.
                    match plugin.plugin.check(*index, &bytes, timeline, &widths) {
                        Ok(found) => {
                            for f in found {
                                let line = f
                                    .param
                                    .as_deref()
                                    .and_then(|name| written[i].iter().rev().find(|w| w.line.name.value == name));
                                let mut p = match line {
                                    Some(w) => Problem::new(&w.source, w.line.value.span, f.message.clone())
                                        .label(format!("`{}` of this node", w.line.name.value)),
                                    None => {
                                        let label = match &f.param {
                                            Some(name) => format!("`{name}` of this node (its default)"),
                                            None => "this node".to_owned(),
                                        };
                                        Problem::at(srcs, graph.nodes[i].name.span, f.message.clone()).label(label)
                                    }
                                };
                                if let Some(h) = f.help {
                                    p = p.help(h);
                                }
                                problems.push(p);
                            }
                        }
                        Err(e) => problems.push(
                            Problem::at(
                                srcs,
                                graph.nodes[i].name.span,
                                format!("node `{}` failed its check: {e}", graph.nodes[i].name.value),
                            )
                            .label("this node"),
                        ),
                    }
                }
            }
            params_bytes[i] = bytes;
        }
    }

    // Writes.
    let mut writes = Vec::new();
    let mut stems: BTreeMap<String, Span> = BTreeMap::new();
    for wd in &graph.writes {
        let Some(i) = resolve_node(&wd.port, &mut problems) else {
            continue;
        };
        let Some(ty) = &states[i].ty else { continue };
        let Some(k) = ty.spec().outputs.iter().position(|p| p.name == wd.port.port.value) else {
            problems.push(port_problem(&wd.port, ty, true));
            continue;
        };
        let format = match &wd.format {
            None => WriteFormat::Csv,
            Some(f) => match WriteFormat::from_name(&f.value) {
                Some(format) => format,
                None => {
                    problems.push(
                        Problem::at(srcs, f.span, format!("`{}` is not a file format heft writes", f.value))
                            .label("unknown format")
                            .help(format!("formats: {}", crate::graph::WRITE_FORMATS.join(", "))),
                    );
                    continue;
                }
            },
        };
        let stem = wd.name.as_ref().map_or_else(|| wd.port.text(), |s| s.value.clone());
        let stem_span = wd.name.as_ref().map_or(wd.port.span(), |s| s.span);
        let file = format!("{stem}.{}", format.extension());
        if let Some(first) = stems.get(&file) {
            problems.push(
                Problem::at(srcs, stem_span, format!("two outputs would be written to `{file}`"))
                    .label("same file")
                    .also(place(*first), "first written here")
                    .help("give one of them another name with `as NAME`"),
            );
            continue;
        }
        stems.insert(file, stem_span);
        let shape = ty.spec().outputs[k].kind;
        let chain = match shape {
            PortKind::Points => shapes[i]
                .as_ref()
                .and_then(|o| o.get(k))
                .and_then(|o| strand_joints(&states[i], o.points)),
            _ => None,
        };
        writes.push(PlannedWrite {
            node: i,
            output: k,
            stem,
            format,
            chain,
        });
    }

    // Bakes and plots.
    let param_of = |node: &str, param: &str| -> Result<(f64, Dimension), String> {
        let i = *by_name
            .get(node)
            .ok_or_else(|| format!("no node named `{node}` in the graph"))?;
        let ty = states[i]
            .ty
            .as_ref()
            .ok_or_else(|| format!("`{node}` has problems of its own"))?;
        let k = ty
            .spec()
            .params
            .iter()
            .position(|p| p.name == param)
            .ok_or_else(|| format!("`{}` has no parameter `{param}`", ty.full_name))?;
        match (&ty.spec().params[k].ty, states[i].params.get(k)) {
            (ParamType::Number { dimension, .. }, Some(ParamValue::Number(v))) => Ok((*v, *dimension)),
            _ => Err(format!("`{node}.{param}` is not a number")),
        }
    };
    let resolve = |r: &PortRef| -> Result<(usize, usize, Shape, Dimension), Problem> {
        let i = node_index(r)?;
        let ty = states[i]
            .ty
            .as_ref()
            .ok_or_else(|| Problem::at(srcs, r.node.span, "this node has no known type"))?;
        let k = ty
            .spec()
            .outputs
            .iter()
            .position(|p| p.name == r.port.value)
            .ok_or_else(|| port_problem(r, ty, true))?;
        // A node whose shapes are unknown already has a problem reported.
        let shape = shapes[i]
            .as_ref()
            .map_or(Shape::of(ty.spec().outputs[k].kind), |s| s[k]);
        Ok((i, k, shape, ty.spec().outputs[k].dimension))
    };
    let mut bakes = Vec::new();
    let mut plots = Vec::new();
    let mut reviews = Vec::new();
    let block_src = |b: &crate::graph::OutputBlock| srcs.get(usize::from(b.file.span.file)).unwrap_or(src);
    let mut files: BTreeMap<String, Span> = BTreeMap::new();
    for block in &graph.blocks {
        if let Some(first) = files.get(&block.file.value) {
            problems.push(
                Problem::at(
                    srcs,
                    block.file.span,
                    format!("`{}` is written twice", block.file.value),
                )
                .label("same file")
                .also(place(*first), "first written here"),
            );
            continue;
        }
        files.insert(block.file.value.clone(), block.file.span);
        match block.kind {
            BlockKind::Bake => match blocks::plan_bake(block_src(block), block, &resolve) {
                Ok(mut b) => {
                    for item in &mut b.items {
                        if item.shape.kind != PortKind::Points {
                            continue;
                        }
                        item.chain = item
                            .chain
                            .or_else(|| strand_joints(&states[item.node], item.shape.points));
                        if item.chain.is_some() {
                            item.anchor = anchor_of(&states, &inputs, item.node);
                        }
                    }
                    // A bake a package can open, and heft can build without running out of
                    // memory (each joint's keys, and its node, sampler and channel).
                    let joints: u64 = b
                        .items
                        .iter()
                        .map(|i| {
                            if i.shape.kind == PortKind::Points {
                                i.shape.points as u64
                            } else {
                                1
                            }
                        })
                        .sum();
                    let baked = match b.range {
                        Some((a, z)) => (z - a + 1).max(0) as u64,
                        None => timeline.frame_count,
                    };
                    if joints > MAX_BAKE_JOINTS || joints.saturating_mul(baked) > MAX_BAKE_KEYS {
                        problems.push(
                            Problem::at(
                                srcs,
                                block.file.span,
                                format!(
                                    "this bake would hold {joints} joints keyed at {baked} frames: more than a bake file \
                                     takes ({MAX_BAKE_JOINTS} joints, {MAX_BAKE_KEYS} keys in all)"
                                ),
                            )
                            .label("too large to bake")
                            .help(
                                "bake fewer strands or frames per file (`frames = A..B`, several bake blocks), or \
                                 write the positions as CSV",
                            ),
                        );
                    }
                    if let Some(p) = range_outside(srcs, block, b.range, timeline) {
                        problems.push(p);
                    }
                    if let Some((name, span)) = b.character.clone() {
                        let found = by_name.get(name.as_str()).copied();
                        let is_character = found.is_some_and(|i| {
                            states[i]
                                .ty
                                .as_ref()
                                .and_then(|t| t.instance.as_ref())
                                .is_some_and(|inst| inst.hierarchy.is_some())
                        });
                        match found {
                            Some(i) if is_character => b.base = Some(i),
                            _ => {
                                let mut p = Problem::at(
                                    srcs,
                                    span,
                                    format!("`{name}` is not a `track.character` node of this graph"),
                                )
                                .label("not a character");
                                let characters: Vec<&str> = by_name
                                    .iter()
                                    .filter(|(_, i)| {
                                        states[**i]
                                            .ty
                                            .as_ref()
                                            .and_then(|t| t.instance.as_ref())
                                            .is_some_and(|inst| inst.hierarchy.is_some())
                                    })
                                    .map(|(n, _)| *n)
                                    .collect();
                                p = p.help(if characters.is_empty() {
                                    "the bake writes into a character's own file: declare one with `NAME = track.character`".to_owned()
                                } else {
                                    format!("characters: {}", characters.join(", "))
                                });
                                problems.push(p);
                            }
                        }
                    }
                    bakes.push(b);
                }
                Err(mut p) => problems.append(&mut p),
            },
            BlockKind::Plot => match blocks::plan_plot(block_src(block), block, &resolve, &param_of) {
                Ok(mut p) => {
                    for item in &mut p.items {
                        if item.shape.kind == PortKind::Points {
                            item.chain = item
                                .chain
                                .or_else(|| strand_joints(&states[item.node], item.shape.points));
                        }
                    }
                    plots.push(p);
                }
                Err(mut p) => problems.append(&mut p),
            },
            BlockKind::Review => {
                let (mut r, mut found) = blocks::plan_review(block_src(block), block, &resolve, &param_of);
                problems.append(&mut found);
                for item in &mut r.items {
                    if let ReviewShow::Points { chain } = &mut item.show {
                        *chain = chain.or_else(|| strand_joints(&states[item.node], item.shape.points));
                    }
                }
                if let Some(p) = range_outside(srcs, block, r.range, timeline) {
                    problems.push(p);
                }
                if let Some((name, span)) = &r.body_name {
                    let found = by_name.get(name.as_str()).copied();
                    let joints = |i: usize| {
                        states[i].ty.as_ref().is_some_and(|t| {
                            t.spec()
                                .outputs
                                .iter()
                                .any(|o| o.kind == PortKind::Transform && o.dimension == Dimension::Length)
                        })
                    };
                    match found {
                        Some(i) if joints(i) => r.body = Some(i),
                        Some(_) => problems.push(
                            Problem::at(
                                srcs,
                                *span,
                                format!("`{name}` has no joints (transform outputs) to draw"),
                            )
                            .label("not a body")
                            .help("a body is a node with transform outputs: a `track.character`, a jump planner"),
                        ),
                        None => {
                            let mut p =
                                Problem::at(srcs, *span, format!("no node named `{name}`")).label("unknown node");
                            if let Some(close) = closest(name, by_name.keys().copied()) {
                                p = p.help(format!("did you mean `{close}`?"));
                            }
                            problems.push(p);
                        }
                    }
                }
                reviews.push(r);
            }
        }
    }

    if !problems.is_empty() {
        return Err(problems);
    }
    let mut nodes = Vec::with_capacity(n);
    for (i, (s, d)) in states.into_iter().zip(&graph.nodes).enumerate() {
        // Every node without a type or shapes has a problem reported above; this is a guard.
        let (Some(ty), Some(outputs)) = (s.ty, shapes[i].take()) else {
            return Err(vec![Problem::at(
                srcs,
                d.name.span,
                format!("node `{}` could not be planned", d.name.value),
            )]);
        };
        nodes.push(PlannedNode {
            name: d.name.value.clone(),
            ty,
            params: s.params,
            params_bytes: std::mem::take(&mut params_bytes[i]),
            inputs: std::mem::take(&mut inputs[i]),
            outputs,
            host_data: host_data[i].take(),
            at: place(d.name.span).location(),
        });
    }
    Ok(Plan {
        source: Arc::clone(src),
        timeline,
        nodes,
        levels,
        writes,
        bakes,
        plots,
        reviews,
    })
}

/// The problem with a block's `frames = A..B` that is not all inside the run's frames.
fn range_outside(
    srcs: &[Arc<Source>],
    block: &OutputBlock,
    range: Option<(i64, i64)>,
    timeline: Timeline,
) -> Option<Problem> {
    let (a, z) = range?;
    let last = timeline.start_frame + timeline.frame_count as i64 - 1;
    if a >= timeline.start_frame && z <= last {
        return None;
    }
    let at = block
        .options
        .iter()
        .find(|o| o.name.value == "frames")
        .map_or(block.file.span, |o| o.value.span);
    let (what, verb) = match block.kind {
        BlockKind::Bake => ("bake", "bake"),
        BlockKind::Plot => ("plot", "draw"),
        BlockKind::Review => ("review", "show"),
    };
    Some(
        Problem::at(
            srcs,
            at,
            format!(
                "the {what}'s frames {a}..{z} are not all in the run's frames {}..{last}",
                timeline.start_frame
            ),
        )
        .label("outside the run")
        .help(format!(
            "{verb} a range inside the graph's `frames` (or the `--frames` given)"
        )),
    )
}

/// Walks back from `start` along drivers that could not be ordered until a node repeats, and
/// returns the wires of that cycle in the direction data flows. Empty if there is none.
fn cycle_through_drivers(start: usize, edges: &[(usize, usize, usize)], level_of: &[usize]) -> Vec<usize> {
    let mut path = vec![start];
    let mut wires = Vec::new();
    let mut at = start;
    while let Some(&(a, _, w)) = edges.iter().find(|e| e.1 == at && level_of[e.0] == usize::MAX) {
        wires.push(w);
        if let Some(pos) = path.iter().position(|&p| p == a) {
            // path[pos..] and wires[pos..] form the cycle (wire j feeds path[j]).
            let mut cycle = wires.split_off(pos);
            cycle.reverse();
            return cycle;
        }
        path.push(a);
        at = a;
    }
    Vec::new()
}

/// The joints per chain of a strand node's points: its `segments` parameter plus one, when it
/// has one and the points divide into such chains.
fn strand_joints(state: &NodeState, points: usize) -> Option<usize> {
    let ty = state.ty.as_ref()?;
    let k = ty.spec().params.iter().position(|p| p.name == "segments")?;
    let ParamValue::Integer(segments) = state.params.get(k)? else {
        return None;
    };
    let c = usize::try_from(*segments).ok()? + 1;
    (c >= 2 && points.is_multiple_of(c)).then_some(c)
}

/// What a strand node hangs from: the driver of its `anchor` input.
fn anchor_of(states: &[NodeState], inputs: &[Vec<Option<(usize, usize)>>], node: usize) -> blocks::BakeAnchor {
    let Some(ty) = states[node].ty.as_ref() else {
        return blocks::BakeAnchor::None;
    };
    let Some(k) = ty.spec().inputs.iter().position(|p| p.name == "anchor") else {
        return blocks::BakeAnchor::None;
    };
    let Some((a, out)) = inputs[node].get(k).copied().flatten() else {
        return blocks::BakeAnchor::None;
    };
    let Some(source) = states[a].ty.as_ref() else {
        return blocks::BakeAnchor::None;
    };
    if source.spec().outputs.get(out).map(|o| o.kind) != Some(PortKind::Transform) {
        return blocks::BakeAnchor::None;
    }
    if source.instance.as_ref().is_some_and(|inst| inst.hierarchy.is_some()) {
        blocks::BakeAnchor::Joint { node: a, output: out }
    } else {
        blocks::BakeAnchor::Series { node: a, output: out }
    }
}
