//! What a plugin says about itself: its node types, their ports and parameters.
//! Encoded with [`crate::codec`] to cross the plugin boundary.

use serde::{Deserialize, Serialize};

use crate::units::Dimension;

/// The kind of data on a port. Every kind is a series of `f64` per frame, in
/// frame-major layout; [`PortKind::width`] says how many values one frame holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum PortKind {
    /// One value per frame.
    Scalar,
    /// x, y, z per frame.
    Vec3,
    /// Translation x, y, z then a unit quaternion x, y, z, w per frame (7 values).
    Transform,
    /// On (1.0) or off (0.0) per frame.
    Flag,
    /// N points of x, y, z per frame; N is fixed per port and known before evaluation.
    Points,
}

impl PortKind {
    /// Values per frame for this kind; `points` is N for [`PortKind::Points`] and ignored otherwise.
    pub fn width(self, points: usize) -> usize {
        match self {
            PortKind::Scalar | PortKind::Flag => 1,
            PortKind::Vec3 => 3,
            PortKind::Transform => 7,
            PortKind::Points => 3 * points,
        }
    }

    /// The word the graph language and `heft nodes` use for this kind.
    pub fn name(self) -> &'static str {
        match self {
            PortKind::Scalar => "scalar",
            PortKind::Vec3 => "vec3",
            PortKind::Transform => "transform",
            PortKind::Flag => "flag",
            PortKind::Points => "points",
        }
    }
}

/// The shape of the data on one port: its kind and, for points, how many.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct Shape {
    /// The kind of data.
    pub kind: PortKind,
    /// N for [`PortKind::Points`]; 0 for every other kind.
    pub points: usize,
}

impl Shape {
    /// A shape of a kind that is not `Points`.
    pub const fn of(kind: PortKind) -> Shape {
        Shape { kind, points: 0 }
    }
    /// A points shape with `n` points.
    pub const fn points(n: usize) -> Shape {
        Shape {
            kind: PortKind::Points,
            points: n,
        }
    }
    /// Values per frame.
    pub fn width(self) -> usize {
        self.kind.width(self.points)
    }
}

impl std::fmt::Display for Shape {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.kind {
            PortKind::Points => write!(f, "{} points", self.points),
            k => f.write_str(k.name()),
        }
    }
}

/// One input or output port of a node type.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PortSpec {
    /// Port name, unique among the node's inputs (or outputs).
    pub name: String,
    /// Kind of data.
    pub kind: PortKind,
    /// For a points port: `Some(n)` when N is fixed by the node type. For an input,
    /// `None` accepts any N; for an output, `None` means the node computes N from its
    /// parameters and inputs before evaluation.
    pub points: Option<usize>,
    /// The SI dimension of the values (positions are a length, and so on).
    pub dimension: Dimension,
    /// An unconnected optional input is passed as an empty series.
    pub optional: bool,
    /// One line of documentation.
    pub doc: String,
    /// For a port whose values are whole-number codes: the name of each code (value k means
    /// `codes[k]`), written with the values (a CSV header names them). Not part of the
    /// port's own encoding: it crosses the boundary after the descriptor ([`encode_descriptor`]),
    /// so that the descriptors of plugins built before it still read.
    #[serde(skip)]
    pub codes: Vec<String>,
}

impl PortSpec {
    /// A required port.
    pub fn new(name: &str, kind: PortKind, dimension: Dimension, doc: &str) -> PortSpec {
        PortSpec {
            name: name.to_owned(),
            kind,
            points: None,
            dimension,
            optional: false,
            doc: doc.to_owned(),
            codes: Vec::new(),
        }
    }
    /// Names the whole-number codes the port's values take: value k means `names[k]`.
    pub fn with_codes(mut self, names: &[&str]) -> PortSpec {
        self.codes = names.iter().map(|n| (*n).to_owned()).collect();
        self
    }
    /// Marks an input optional.
    pub fn optional(mut self) -> PortSpec {
        self.optional = true;
        self
    }
    /// Fixes N for a points port.
    pub fn with_points(mut self, n: usize) -> PortSpec {
        self.points = Some(n);
        self
    }
}

/// A parameter value, always in SI units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum ParamValue {
    /// A real number in the SI unit of the parameter's dimension.
    Number(f64),
    /// A whole number.
    Integer(i64),
    /// On or off.
    Bool(bool),
    /// One of a fixed set of words.
    Choice(String),
    /// A vector in the SI unit of the parameter's dimension.
    Vec3([f64; 3]),
    /// Keyframes: (time in seconds, value vector in SI), in increasing time.
    Keys(Vec<(f64, [f64; 3])>),
    /// Text (for host-side nodes: a file path, a column name).
    Text(String),
}

impl ParamValue {
    /// The word for this value's type, for messages.
    pub fn type_name(&self) -> &'static str {
        match self {
            ParamValue::Number(_) => "number",
            ParamValue::Integer(_) => "integer",
            ParamValue::Bool(_) => "bool",
            ParamValue::Choice(_) => "choice",
            ParamValue::Vec3(_) => "vec3",
            ParamValue::Keys(_) => "keys",
            ParamValue::Text(_) => "text",
        }
    }
}

/// The type of a parameter and its valid range.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum ParamType {
    /// A real number of a dimension, valid in `min..=max` (SI units).
    Number {
        /// Physical dimension.
        dimension: Dimension,
        /// Smallest valid value.
        min: f64,
        /// Largest valid value.
        max: f64,
    },
    /// A whole number valid in `min..=max`.
    Integer {
        /// Smallest valid value.
        min: i64,
        /// Largest valid value.
        max: i64,
    },
    /// On or off.
    Bool,
    /// One of these words.
    Choice {
        /// The accepted words.
        options: Vec<String>,
    },
    /// A vector of a dimension, each component valid in `min..=max`.
    Vec3 {
        /// Physical dimension.
        dimension: Dimension,
        /// Smallest valid component.
        min: f64,
        /// Largest valid component.
        max: f64,
    },
    /// Keyframes `time: vector` with strictly increasing times; the vector has this dimension.
    Keys {
        /// Physical dimension of the vectors.
        dimension: Dimension,
        /// Fewest keys accepted.
        min_keys: usize,
    },
    /// A quoted text.
    Text,
}

/// One parameter of a node type.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ParamSpec {
    /// Parameter name, unique in the node type.
    pub name: String,
    /// Type, dimension and valid range.
    pub ty: ParamType,
    /// Value used when the graph gives none; `None` makes the parameter required.
    pub default: Option<ParamValue>,
    /// One line of documentation.
    pub doc: String,
    /// A number whose default scales with another number parameter of the same node:
    /// `Some((other, factor))` makes the default `factor` times the value `other` has (given
    /// or defaulted), so a body's lengths follow its height unless the graph sets them. The
    /// `default` stays the value at `other`'s own default. Like [`PortSpec::codes`], it
    /// crosses the boundary after the descriptor, so older plugins still load.
    #[serde(skip)]
    pub scaled_default: Option<(String, f64)>,
}

impl ParamSpec {
    /// A real-valued parameter with a default.
    pub fn number(name: &str, dimension: Dimension, default: f64, range: (f64, f64), doc: &str) -> ParamSpec {
        ParamSpec {
            name: name.to_owned(),
            ty: ParamType::Number {
                dimension,
                min: range.0,
                max: range.1,
            },
            default: Some(ParamValue::Number(default)),
            doc: doc.to_owned(),
            scaled_default: None,
        }
    }
    /// A whole-number parameter with a default.
    pub fn integer(name: &str, default: i64, range: (i64, i64), doc: &str) -> ParamSpec {
        ParamSpec {
            name: name.to_owned(),
            ty: ParamType::Integer {
                min: range.0,
                max: range.1,
            },
            default: Some(ParamValue::Integer(default)),
            doc: doc.to_owned(),
            scaled_default: None,
        }
    }
    /// An on/off parameter with a default.
    pub fn boolean(name: &str, default: bool, doc: &str) -> ParamSpec {
        ParamSpec {
            name: name.to_owned(),
            ty: ParamType::Bool,
            default: Some(ParamValue::Bool(default)),
            doc: doc.to_owned(),
            scaled_default: None,
        }
    }
    /// A choice among words, defaulting to the first.
    pub fn choice(name: &str, options: &[&str], doc: &str) -> ParamSpec {
        ParamSpec {
            name: name.to_owned(),
            ty: ParamType::Choice {
                options: options.iter().map(|s| (*s).to_owned()).collect(),
            },
            default: options.first().map(|s| ParamValue::Choice((*s).to_owned())),
            doc: doc.to_owned(),
            scaled_default: None,
        }
    }
    /// A vector parameter with a default.
    pub fn vec3(name: &str, dimension: Dimension, default: [f64; 3], range: (f64, f64), doc: &str) -> ParamSpec {
        ParamSpec {
            name: name.to_owned(),
            ty: ParamType::Vec3 {
                dimension,
                min: range.0,
                max: range.1,
            },
            default: Some(ParamValue::Vec3(default)),
            doc: doc.to_owned(),
            scaled_default: None,
        }
    }
    /// A required keyframe list.
    pub fn keys(name: &str, dimension: Dimension, min_keys: usize, doc: &str) -> ParamSpec {
        ParamSpec {
            name: name.to_owned(),
            ty: ParamType::Keys { dimension, min_keys },
            default: None,
            doc: doc.to_owned(),
            scaled_default: None,
        }
    }
    /// A text parameter, required unless `default` is given.
    pub fn text(name: &str, default: Option<&str>, doc: &str) -> ParamSpec {
        ParamSpec {
            name: name.to_owned(),
            ty: ParamType::Text,
            default: default.map(|d| ParamValue::Text(d.to_owned())),
            doc: doc.to_owned(),
            scaled_default: None,
        }
    }
    /// Makes the parameter required (no default).
    pub fn required(mut self) -> ParamSpec {
        self.default = None;
        self
    }
    /// Makes a number's default `factor` times the value of the node's number parameter
    /// `other` (given or defaulted); the spec's own default should be `factor` times
    /// `other`'s default, which is what a caller without the graph sees.
    pub fn scaled_by(mut self, other: &str, factor: f64) -> ParamSpec {
        self.scaled_default = Some((other.to_owned(), factor));
        self
    }
}

/// A single value a node reports for the whole evaluation (a take-off speed, a jump
/// height, a peak force), as opposed to a per-frame series.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SummarySpec {
    /// Name, unique in the node type.
    pub name: String,
    /// The SI dimension of the value.
    pub dimension: Dimension,
    /// One line of documentation.
    pub doc: String,
}

impl SummarySpec {
    /// A summary value.
    pub fn new(name: &str, dimension: Dimension, doc: &str) -> SummarySpec {
        SummarySpec {
            name: name.to_owned(),
            dimension,
            doc: doc.to_owned(),
        }
    }
}

/// One node type a plugin offers.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct NodeSpec {
    /// Node type name inside the plugin (the graph names it `plugin.node`).
    pub name: String,
    /// One line of documentation.
    pub doc: String,
    /// Longer notes: method, sources, stability limits.
    pub notes: String,
    /// Input ports, in order.
    pub inputs: Vec<PortSpec>,
    /// Output ports, in order.
    pub outputs: Vec<PortSpec>,
    /// Parameters, in order.
    pub params: Vec<ParamSpec>,
    /// Values reported once per evaluation, in order; every one must be set by `evaluate`.
    pub summaries: Vec<SummarySpec>,
}

/// Everything a plugin says about itself.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PluginDescriptor {
    /// Plugin name: the first half of `plugin.node`.
    pub name: String,
    /// Plugin version (the node crate's version).
    pub version: String,
    /// The node types, in order; a call names a node type by its index here.
    pub nodes: Vec<NodeSpec>,
    /// ABI 1.3: the indices of the node types that can be evaluated in windows of frames
    /// (`PluginTable::advance`), in order. Not part of the descriptor's own layout: it follows
    /// it on the wire (see [`encode_descriptor`]).
    #[serde(skip)]
    pub windowed: Vec<u32>,
}

/// What follows the descriptor on the wire: additions made after the descriptor's layout was
/// fixed, read only when present (a plugin built before them sends none).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
struct Additions {
    /// (node index, output index, code names) of every output port with codes.
    output_codes: Vec<(u32, u32, Vec<String>)>,
}

/// The second addition, after [`Additions`] (a plugin built with only the first sends only
/// the first).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
struct ParamAdditions {
    /// (node index, parameter index, other parameter, factor) of every parameter whose
    /// default scales with another.
    scaled_defaults: Vec<(u32, u32, String, f64)>,
}

/// The third addition, after [`ParamAdditions`].
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
struct WindowAdditions {
    /// The indices of the node types that run in windows of frames.
    windowed: Vec<u32>,
}

/// The bytes of a descriptor at the boundary: the descriptor, then its additions.
pub fn encode_descriptor(d: &PluginDescriptor) -> Result<Vec<u8>, String> {
    let mut bytes = crate::codec::encode(d)?;
    let mut add = Additions::default();
    let mut params = ParamAdditions::default();
    for (i, n) in d.nodes.iter().enumerate() {
        for (k, p) in n.outputs.iter().enumerate() {
            if !p.codes.is_empty() {
                add.output_codes.push((i as u32, k as u32, p.codes.clone()));
            }
        }
        for (k, p) in n.params.iter().enumerate() {
            if let Some((other, factor)) = &p.scaled_default {
                params
                    .scaled_defaults
                    .push((i as u32, k as u32, other.clone(), *factor));
            }
        }
    }
    bytes.extend(crate::codec::encode(&add)?);
    bytes.extend(crate::codec::encode(&params)?);
    bytes.extend(crate::codec::encode(&WindowAdditions {
        windowed: d.windowed.clone(),
    })?);
    Ok(bytes)
}

/// Reads [`encode_descriptor`]'s bytes, or a descriptor alone (a plugin built before the
/// additions); additions that name no port are an error.
pub fn decode_descriptor(bytes: &[u8]) -> Result<PluginDescriptor, String> {
    let (mut d, used): (PluginDescriptor, usize) = crate::codec::decode_prefix(bytes)?;
    if used == bytes.len() {
        return Ok(d);
    }
    let (add, more): (Additions, usize) = crate::codec::decode_prefix(&bytes[used..])?;
    let rest = &bytes[used + more..];
    let (params, windows): (ParamAdditions, WindowAdditions) = if rest.is_empty() {
        Default::default()
    } else {
        let (params, n): (ParamAdditions, usize) = crate::codec::decode_prefix(rest)?;
        if n == rest.len() {
            (params, WindowAdditions::default())
        } else {
            (params, crate::codec::decode(&rest[n..])?)
        }
    };
    if let Some(&i) = windows.windowed.iter().find(|&&i| i as usize >= d.nodes.len()) {
        return Err(format!(
            "node type {i} runs in windows, but the descriptor does not have it"
        ));
    }
    d.windowed = windows.windowed;
    for (i, k, names) in add.output_codes {
        let port = d
            .nodes
            .get_mut(i as usize)
            .and_then(|n| n.outputs.get_mut(k as usize))
            .ok_or_else(|| format!("codes for output {k} of node type {i}, which the descriptor does not have"))?;
        port.codes = names;
    }
    for (i, k, other, factor) in params.scaled_defaults {
        let param = d
            .nodes
            .get_mut(i as usize)
            .and_then(|n| n.params.get_mut(k as usize))
            .ok_or_else(|| {
                format!("a scaled default for parameter {k} of node type {i}, which the descriptor does not have")
            })?;
        param.scaled_default = Some((other, factor));
    }
    Ok(d)
}

/// A problem a node type finds with its parameters, input shapes or timeline when a graph is
/// checked (`Node::check`): `param` names the parameter to change, when one is to blame, so
/// that the problem points at its line.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CheckProblem {
    /// The parameter to blame, if one is.
    pub param: Option<String>,
    /// What is wrong (one sentence).
    pub message: String,
    /// How to fix it.
    pub help: Option<String>,
}

impl CheckProblem {
    /// A problem with parameter `param`.
    pub fn at(param: &str, message: impl Into<String>) -> CheckProblem {
        CheckProblem {
            param: Some(param.to_owned()),
            message: message.into(),
            help: None,
        }
    }
    /// A problem with the node as a whole.
    pub fn node(message: impl Into<String>) -> CheckProblem {
        CheckProblem {
            param: None,
            message: message.into(),
            help: None,
        }
    }
    /// Adds advice.
    pub fn help(mut self, help: impl Into<String>) -> CheckProblem {
        self.help = Some(help.into());
        self
    }
}
