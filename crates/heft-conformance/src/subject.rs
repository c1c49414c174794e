//! The node under test and the harness that calls it through the plugin boundary.

use std::fmt;
use std::path::Path;

use heft_node_sdk::abi::{PluginTable, Status};
use heft_node_sdk::host::Plugin;
use heft_node_sdk::{Dimension, NodeSpec, ParamSpec, ParamType, ParamValue, PortKind, Timeline};

use crate::{Failure, Property};

/// A node type under test: a loaded plugin and the index of the node type in it.
#[derive(Debug, Clone)]
pub struct Subject {
    plugin: Plugin,
    index: u32,
    name: String,
    spec: NodeSpec,
}

/// The inputs the kit knows how to drive, with their kinds.
const KNOWN_INPUTS: &[(&str, PortKind)] = &[
    ("initial_positions", PortKind::Points),
    ("initial_velocities", PortKind::Points),
    ("anchor", PortKind::Transform),
    ("anchor_b", PortKind::Transform),
    ("collider_1", PortKind::Transform),
    ("collider_2", PortKind::Transform),
    ("collider_3", PortKind::Transform),
    ("wind", PortKind::Points),
];

/// The outputs every subject must have: name, kind, dimension.
const REQUIRED_OUTPUTS: &[(&str, PortKind, Dimension)] = &[
    ("positions", PortKind::Points, Dimension::Length),
    ("velocities", PortKind::Points, Dimension::Velocity),
    ("momentum", PortKind::Vec3, Dimension::Impulse),
    ("energy", PortKind::Scalar, Dimension::Energy),
];

/// Number parameters every subject must have, with their dimensions.
const REQUIRED_NUMBERS: &[(&str, Dimension)] = &[
    ("length", Dimension::Length),
    ("mass_per_length", Dimension::LinearDensity),
    ("stretch_stiffness", Dimension::Force),
    ("bending_stiffness", Dimension::BendingStiffness),
    ("damping", Dimension::Rate),
    ("relative_damping", Dimension::Rate),
    ("gravity", Dimension::Acceleration),
];

/// Integer parameters every subject must have.
const REQUIRED_INTEGERS: &[&str] = &["count", "segments", "substeps"];

impl Subject {
    /// A node type of a plugin linked into the test (its crate's `plugin_table()`); `node` is
    /// `plugin.node` (or the node's name alone).
    pub fn from_static(table: &'static PluginTable, node: &str) -> Result<Subject, Failure> {
        let plugin = Plugin::from_static(table, node).map_err(|e| Failure::new(Property::Load, node, e.to_string()))?;
        Subject::from_plugin(plugin, node)
    }

    /// A node type of a plugin library file (a built `cdylib`).
    pub fn load(path: &Path, node: &str) -> Result<Subject, Failure> {
        let plugin = Plugin::load(path).map_err(|e| Failure::new(Property::Load, node, e.to_string()))?;
        Subject::from_plugin(plugin, node)
    }

    /// A node type of a loaded plugin. Checks that it declares the strand contract's ports and
    /// parameters (for any other dynamics node use [`Subject::open_plugin`] and
    /// [`crate::Dynamics`]).
    pub fn from_plugin(plugin: Plugin, node: &str) -> Result<Subject, Failure> {
        let subject = Subject::open_plugin(plugin, node)?;
        let problems = contract_problems(&subject.spec);
        if !problems.is_empty() {
            return Err(Failure::new(Property::Contract, &subject.name, problems.join("; ")));
        }
        Ok(subject)
    }

    /// A node type of a plugin linked into the test, without the strand contract: what the kit
    /// drives is then declared with a [`crate::Dynamics`].
    pub fn open_static(table: &'static PluginTable, node: &str) -> Result<Subject, Failure> {
        let plugin = Plugin::from_static(table, node).map_err(|e| Failure::new(Property::Load, node, e.to_string()))?;
        Subject::open_plugin(plugin, node)
    }

    /// A node type of a plugin library file, without the strand contract.
    pub fn open(path: &Path, node: &str) -> Result<Subject, Failure> {
        let plugin = Plugin::load(path).map_err(|e| Failure::new(Property::Load, node, e.to_string()))?;
        Subject::open_plugin(plugin, node)
    }

    /// A node type of a loaded plugin, without the strand contract.
    pub fn open_plugin(plugin: Plugin, node: &str) -> Result<Subject, Failure> {
        let desc = plugin.descriptor();
        let bare = match node.split_once('.') {
            Some((p, n)) if p == desc.name => n,
            Some((p, _)) => {
                return Err(Failure::new(
                    Property::Load,
                    node,
                    format!("the plugin is `{}`, not `{p}`", desc.name),
                ));
            }
            None => node,
        };
        let Some(index) = desc.nodes.iter().position(|n| n.name == bare) else {
            let names: Vec<String> = desc.nodes.iter().map(|n| format!("{}.{}", desc.name, n.name)).collect();
            return Err(Failure::new(
                Property::Load,
                node,
                format!("no such node type; the plugin offers {}", names.join(", ")),
            ));
        };
        let spec = desc.nodes[index].clone();
        let name = format!("{}.{}", desc.name, spec.name);
        Ok(Subject {
            plugin,
            index: u32::try_from(index).unwrap_or(u32::MAX),
            name,
            spec,
        })
    }

    /// `plugin.node`.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// What the node type declares.
    pub fn spec(&self) -> &NodeSpec {
        &self.spec
    }

    /// True when the node type has this input.
    pub fn has_input(&self, name: &str) -> bool {
        self.spec.inputs.iter().any(|p| p.name == name)
    }

    /// A parameter of the node type.
    pub fn param(&self, name: &str) -> Option<&ParamSpec> {
        self.spec.params.iter().find(|p| p.name == name)
    }

    /// The valid range of a number parameter.
    pub fn number_range(&self, name: &str) -> Option<(f64, f64)> {
        match self.param(name)?.ty {
            ParamType::Number { min, max, .. } => Some((min, max)),
            _ => None,
        }
    }

    /// The valid range of an integer parameter.
    pub fn integer_range(&self, name: &str) -> Option<(i64, i64)> {
        match self.param(name)?.ty {
            ParamType::Integer { min, max } => Some((min, max)),
            _ => None,
        }
    }

    /// The valid range of each component of a vector parameter.
    pub fn vec3_range(&self, name: &str) -> Option<(f64, f64)> {
        match self.param(name)?.ty {
            ParamType::Vec3 { min, max, .. } => Some((min, max)),
            _ => None,
        }
    }

    /// True when a choice parameter offers this word.
    pub fn offers(&self, name: &str, word: &str) -> bool {
        match self.param(name).map(|p| &p.ty) {
            Some(ParamType::Choice { options }) => options.iter().any(|o| o == word),
            _ => false,
        }
    }

    /// The complete parameter values of a setup: the defaults with the setup's values over them,
    /// checked against the declared types and ranges as the host checks them.
    pub fn param_values(&self, setup: &Setup) -> Result<Vec<ParamValue>, String> {
        for (name, _) in &setup.params {
            if self.param(name).is_none() {
                return Err(format!("the node has no parameter `{name}`"));
            }
        }
        self.spec
            .params
            .iter()
            .map(|p| {
                let value = setup
                    .params
                    .iter()
                    .rev()
                    .find(|(n, _)| *n == p.name)
                    .map(|(_, v)| v.clone())
                    .or_else(|| p.default.clone())
                    .ok_or_else(|| format!("parameter `{}` has no default and the setup gives none", p.name))?;
                check_value(p, &value)?;
                Ok(value)
            })
            .collect()
    }

    /// Evaluates the node for a setup through the plugin boundary, as the host would.
    pub fn run(&self, setup: &Setup) -> Result<Run, RunError> {
        self.run_filled(setup, 0.0)
    }

    /// [`Subject::run`] with every output buffer pre-filled with `fill` (the host fills with
    /// zeros; a different fill shows values the node never writes).
    pub fn run_filled(&self, setup: &Setup, fill: f64) -> Result<Run, RunError> {
        self.run_with(setup, fill, None)
    }

    /// True when the node type runs in windows of frames (ABI 1.3, `Node::WINDOWED`).
    pub fn windowed(&self) -> bool {
        self.plugin.windowed(self.index)
    }

    /// [`Subject::run`] in windows of `window` frames (the last may be shorter), through
    /// `Plugin::advance` with one carry, the windows joined: what `heft run` does with a node
    /// that runs in windows. A node that does not is run whole.
    pub fn run_in_windows(&self, setup: &Setup, window: usize) -> Result<Run, RunError> {
        self.run_with(setup, 0.0, Some(window.max(1)))
    }

    fn run_with(&self, setup: &Setup, fill: f64, window: Option<usize>) -> Result<Run, RunError> {
        let values = self.param_values(setup).map_err(RunError::Setup)?;
        let bytes = Plugin::encode_params(&values).map_err(RunError::Setup)?;
        let tl = setup.timeline;
        let frames = tl.frames();
        for (name, _) in &setup.inputs {
            if !self.has_input(name) {
                return Err(RunError::Setup(format!("the node has no input `{name}`")));
            }
        }
        let mut inputs: Vec<(&[f64], usize)> = Vec::with_capacity(self.spec.inputs.len());
        for port in &self.spec.inputs {
            match setup.inputs.iter().rev().find(|(n, _)| *n == port.name) {
                None => inputs.push((&[], 0)),
                Some((_, data)) => {
                    if frames == 0 || data.len() % frames != 0 || data.is_empty() {
                        return Err(RunError::Setup(format!(
                            "input `{}` holds {} values, not a whole number of values for each of {frames} frames",
                            port.name,
                            data.len()
                        )));
                    }
                    let width = data.len() / frames;
                    let ok = match port.kind {
                        PortKind::Points => width.is_multiple_of(3),
                        k => width == k.width(0),
                    };
                    if !ok {
                        return Err(RunError::Setup(format!(
                            "input `{}` is a {} port; {width} values per frame do not fit it",
                            port.name,
                            port.kind.name()
                        )));
                    }
                    inputs.push((data.as_slice(), width));
                }
            }
        }
        let widths: Vec<usize> = inputs.iter().map(|(_, w)| *w).collect();
        let points = self
            .plugin
            .output_points(self.index, &bytes, tl, &widths, self.spec.outputs.len())
            .map_err(|e| RunError::Node {
                status: e.status,
                message: e.message,
            })?;
        let shape: Vec<usize> = self
            .spec
            .outputs
            .iter()
            .zip(&points)
            .map(|(o, n)| o.kind.width(*n))
            .collect();
        let mut outputs: Vec<Vec<f64>> = shape.iter().map(|w| vec![fill; w * frames]).collect();
        let mut summaries = vec![f64::NAN; self.spec.summaries.len()];
        let node_error = |e: heft_node_sdk::host::CallError| RunError::Node {
            status: e.status,
            message: e.message,
        };
        let warnings = if let Some(step) = window.filter(|_| self.windowed()) {
            let mut carry = heft_node_sdk::host::Carry::new(self.index);
            let mut warnings = Vec::new();
            let mut first = 0;
            while first < frames {
                let count = step.min(frames - first);
                let mut part: Vec<Vec<f64>> = shape.iter().map(|w| vec![fill; w * count]).collect();
                let mut views: Vec<(&mut [f64], usize)> = part
                    .iter_mut()
                    .zip(&shape)
                    .map(|(v, w)| (v.as_mut_slice(), *w))
                    .collect();
                let w = heft_node_sdk::abi::Window {
                    first: first as u64,
                    count: count as u64,
                };
                warnings.extend(
                    self.plugin
                        .advance(
                            self.index,
                            &bytes,
                            tl,
                            w,
                            &inputs,
                            &mut views,
                            &mut summaries,
                            1,
                            &mut carry,
                        )
                        .map_err(node_error)?,
                );
                for ((out, part), width) in outputs.iter_mut().zip(&part).zip(&shape) {
                    out[first * width..(first + count) * width].copy_from_slice(part);
                }
                first += count;
            }
            warnings
        } else {
            let mut views: Vec<(&mut [f64], usize)> = outputs
                .iter_mut()
                .zip(&shape)
                .map(|(v, w)| (v.as_mut_slice(), *w))
                .collect();
            self.plugin
                .evaluate(self.index, &bytes, tl, &inputs, &mut views, &mut summaries)
                .map_err(node_error)?
        };
        let n = self
            .spec
            .outputs
            .iter()
            .position(|o| o.name == "positions")
            .map(|k| points[k])
            .unwrap_or(0);
        Ok(Run {
            timeline: tl,
            points: n,
            names: self.spec.outputs.iter().map(|o| o.name.clone()).collect(),
            outputs: outputs.into_iter().zip(shape).collect(),
            summaries,
            warnings,
        })
    }

    /// The setup's parameters and inputs in words, with units, for failure messages.
    pub fn describe(&self, setup: &Setup) -> String {
        let mut parts: Vec<String> = Vec::new();
        for (name, value) in &setup.params {
            let dim = self.param(name).and_then(|p| match p.ty {
                ParamType::Number { dimension, .. } | ParamType::Vec3 { dimension, .. } => Some(dimension),
                _ => None,
            });
            let unit = dim.map(|d| d.si_symbol()).unwrap_or("");
            let text = match value {
                ParamValue::Number(v) => format!("{v}"),
                ParamValue::Integer(v) => format!("{v}"),
                ParamValue::Bool(v) => format!("{v}"),
                ParamValue::Choice(v) => v.clone(),
                ParamValue::Text(v) => format!("{v:?}"),
                ParamValue::Vec3(v) => format!("({}, {}, {})", v[0], v[1], v[2]),
                ParamValue::Keys(k) => format!("{} keys", k.len()),
            };
            if unit.is_empty() {
                parts.push(format!("{name} = {text}"));
            } else {
                parts.push(format!("{name} = {text} {unit}"));
            }
        }
        let tl = setup.timeline;
        let mut text = format!(
            "{}; frames {}..={} at {}/{} fps",
            parts.join(", "),
            tl.start_frame,
            tl.frame_number(tl.frames().saturating_sub(1)),
            tl.rate_num,
            tl.rate_den
        );
        let connected: Vec<&str> = setup.inputs.iter().map(|(n, _)| n.as_str()).collect();
        if connected.is_empty() {
            text.push_str("; no input connected");
        } else {
            text.push_str(&format!("; connected: {}", connected.join(", ")));
        }
        for note in &setup.notes {
            text.push_str("; ");
            text.push_str(note);
        }
        text
    }
}

fn check_value(p: &ParamSpec, value: &ParamValue) -> Result<(), String> {
    let name = &p.name;
    match (&p.ty, value) {
        (ParamType::Number { min, max, .. }, ParamValue::Number(v)) => {
            if !(v >= min && v <= max) {
                return Err(format!("`{name}` = {v} is outside its valid range {min} to {max}"));
            }
        }
        (ParamType::Integer { min, max }, ParamValue::Integer(v)) => {
            if v < min || v > max {
                return Err(format!("`{name}` = {v} is outside its valid range {min} to {max}"));
            }
        }
        (ParamType::Vec3 { min, max, .. }, ParamValue::Vec3(v)) => {
            if let Some(c) = v.iter().find(|c| !(*c >= min && *c <= max)) {
                return Err(format!(
                    "`{name}` has a component {c} outside its valid range {min} to {max}"
                ));
            }
        }
        (ParamType::Choice { options }, ParamValue::Choice(v)) => {
            if !options.contains(v) {
                return Err(format!("`{name}` = {v} is not one of {}", options.join(", ")));
            }
        }
        (ParamType::Bool, ParamValue::Bool(_))
        | (ParamType::Keys { .. }, ParamValue::Keys(_))
        | (ParamType::Text, ParamValue::Text(_)) => {}
        (_, v) => return Err(format!("`{name}` cannot take a {}", v.type_name())),
    }
    Ok(())
}

/// What the node type is missing of the ports and parameters the kit drives.
fn contract_problems(spec: &NodeSpec) -> Vec<String> {
    let mut problems = Vec::new();
    for (name, kind, dim) in REQUIRED_OUTPUTS {
        match spec.outputs.iter().find(|o| o.name == *name) {
            None => problems.push(format!("no output `{name}` ({}, {})", kind.name(), dim.si_symbol())),
            Some(o) if o.kind != *kind || o.dimension != *dim => problems.push(format!(
                "output `{name}` is {} in {:?}, the contract says {} in {:?}",
                o.kind.name(),
                o.dimension,
                kind.name(),
                dim
            )),
            Some(_) => {}
        }
    }
    for (name, kind) in KNOWN_INPUTS {
        match spec.inputs.iter().find(|p| p.name == *name) {
            None if name.starts_with("initial_") => problems.push(format!("no input `{name}` ({})", kind.name())),
            Some(p) if p.kind != *kind => problems.push(format!(
                "input `{name}` is {}, the contract says {}",
                p.kind.name(),
                kind.name()
            )),
            _ => {}
        }
    }
    for p in &spec.inputs {
        if !p.optional && !KNOWN_INPUTS.iter().any(|(n, _)| *n == p.name) {
            problems.push(format!("required input `{}` is not one the kit can drive", p.name));
        }
    }
    for (name, dim) in REQUIRED_NUMBERS {
        match spec.params.iter().find(|p| p.name == *name).map(|p| &p.ty) {
            Some(ParamType::Number { dimension, .. }) if dimension == dim => {}
            Some(_) => problems.push(format!("parameter `{name}` is not a number in {}", dim.si_symbol())),
            None => problems.push(format!("no parameter `{name}` ({})", dim.si_symbol())),
        }
    }
    for name in REQUIRED_INTEGERS {
        match spec.params.iter().find(|p| p.name == *name).map(|p| &p.ty) {
            Some(ParamType::Integer { .. }) => {}
            _ => problems.push(format!("no integer parameter `{name}`")),
        }
    }
    match spec.params.iter().find(|p| p.name == "pin").map(|p| &p.ty) {
        Some(ParamType::Choice { options }) if options.iter().any(|o| o == "free") => {}
        _ => problems.push("no choice parameter `pin` with the option `free`".to_owned()),
    }
    for p in &spec.params {
        if p.default.is_none() {
            problems.push(format!("parameter `{}` has no default", p.name));
        }
    }
    problems
}

/// One evaluation to make: the timeline, parameter values over the node's defaults, and
/// connected inputs (every other input is left unconnected).
#[derive(Debug, Clone)]
pub struct Setup {
    /// The frames to evaluate.
    pub timeline: Timeline,
    params: Vec<(String, ParamValue)>,
    inputs: Vec<(String, Vec<f64>)>,
    notes: Vec<String>,
}

impl Setup {
    /// A setup over a timeline, every parameter at its default, nothing connected.
    pub fn new(timeline: Timeline) -> Setup {
        Setup {
            timeline,
            params: Vec::new(),
            inputs: Vec::new(),
            notes: Vec::new(),
        }
    }

    /// `frames` frames from frame 1001 at 24 fps (the kit's usual timeline).
    pub fn at_24fps(frames: usize) -> Setup {
        Setup::new(Timeline {
            start_frame: 1001,
            frame_count: frames as u64,
            rate_num: 24,
            rate_den: 1,
        })
    }

    /// Sets a parameter.
    pub fn param(mut self, name: &str, value: ParamValue) -> Setup {
        self.params.retain(|(n, _)| n != name);
        self.params.push((name.to_owned(), value));
        self
    }

    /// Sets a number parameter (SI).
    pub fn number(self, name: &str, value: f64) -> Setup {
        self.param(name, ParamValue::Number(value))
    }

    /// Sets an integer parameter.
    pub fn integer(self, name: &str, value: i64) -> Setup {
        self.param(name, ParamValue::Integer(value))
    }

    /// Sets a choice parameter.
    pub fn choice(self, name: &str, word: &str) -> Setup {
        self.param(name, ParamValue::Choice(word.to_owned()))
    }

    /// Sets a vector parameter (SI).
    pub fn vec3(self, name: &str, value: [f64; 3]) -> Setup {
        self.param(name, ParamValue::Vec3(value))
    }

    /// The value the setup gives a parameter, if any.
    pub fn get(&self, name: &str) -> Option<&ParamValue> {
        self.params.iter().find(|(n, _)| n == name).map(|(_, v)| v)
    }

    /// Connects an input to a whole series (frames times width values, frame-major).
    pub fn connect(mut self, name: &str, series: Vec<f64>) -> Setup {
        self.inputs.retain(|(n, _)| n != name);
        self.inputs.push((name.to_owned(), series));
        self
    }

    /// Connects an input to the same values at every frame.
    pub fn connect_still(self, name: &str, frame: &[f64]) -> Setup {
        let frames = self.timeline.frames();
        let series = frame.repeat(frames);
        self.connect(name, series)
    }

    /// Connects `initial_positions` and `initial_velocities` (frame 0 is what counts; the kit
    /// repeats it at every frame).
    pub fn initial_state(self, positions: &[[f64; 3]], velocities: &[[f64; 3]]) -> Setup {
        let p: Vec<f64> = positions.iter().flatten().copied().collect();
        let v: Vec<f64> = velocities.iter().flatten().copied().collect();
        self.connect_still("initial_positions", &p)
            .connect_still("initial_velocities", &v)
    }

    /// Adds a note to the setup's description (how the inputs were made).
    pub fn note(mut self, text: impl Into<String>) -> Setup {
        self.notes.push(text.into());
        self
    }
}

/// Why a run did not produce outputs.
#[derive(Debug, Clone, PartialEq)]
pub enum RunError {
    /// The setup does not fit the node (an unknown parameter, a value out of range).
    Setup(String),
    /// The node refused (status `NodeError`), panicked, or the call was malformed.
    Node {
        /// How the call failed.
        status: Status,
        /// The message.
        message: String,
    },
}

impl RunError {
    /// True for an error the node returned on purpose (not a panic, not a malformed call).
    pub fn is_node_error(&self) -> bool {
        matches!(
            self,
            RunError::Node {
                status: Status::NodeError,
                ..
            }
        )
    }
}

impl fmt::Display for RunError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            RunError::Setup(m) => write!(f, "the kit's setup does not fit the node: {m}"),
            RunError::Node {
                status: Status::Panic,
                message,
            } => write!(f, "the node panicked: {message}"),
            RunError::Node {
                status: Status::BadCall,
                message,
            } => write!(f, "malformed call: {message}"),
            RunError::Node { message, .. } => write!(f, "the node returned an error: {message}"),
        }
    }
}

impl std::error::Error for RunError {}

/// The outputs of one evaluation.
#[derive(Debug, Clone)]
pub struct Run {
    /// The frames evaluated.
    pub timeline: Timeline,
    /// N of the `positions` output.
    pub points: usize,
    names: Vec<String>,
    outputs: Vec<(Vec<f64>, usize)>,
    /// Summary values, in spec order.
    pub summaries: Vec<f64>,
    /// Warnings the node recorded.
    pub warnings: Vec<String>,
}

impl Run {
    /// Number of frames.
    pub fn frames(&self) -> usize {
        self.timeline.frames()
    }

    /// An output's values (frame-major) and its width.
    pub fn output(&self, name: &str) -> Option<(&[f64], usize)> {
        let k = self.names.iter().position(|n| n == name)?;
        let (v, w) = &self.outputs[k];
        Some((v.as_slice(), *w))
    }

    /// Every output: name, values, width.
    pub fn outputs(&self) -> impl Iterator<Item = (&str, &[f64], usize)> {
        self.names
            .iter()
            .zip(&self.outputs)
            .map(|(n, (v, w))| (n.as_str(), v.as_slice(), *w))
    }

    /// How many 3-vectors an output holds per frame (1 for a vec3 port, N for a points port, 0
    /// for a missing output or a narrower one).
    pub fn vectors(&self, name: &str) -> usize {
        self.output(name).map_or(0, |(_, w)| w / 3)
    }

    /// The `i`-th 3-vector of an output at frame `f` (0-based within the run), if there is one.
    pub fn vector(&self, name: &str, f: usize, i: usize) -> Option<[f64; 3]> {
        let (v, w) = self.output(name)?;
        let at = f * w + 3 * i;
        (3 * i + 3 <= w && at + 3 <= v.len()).then(|| [v[at], v[at + 1], v[at + 2]])
    }

    /// The root-mean-square distance between this run's and `other`'s 3-vectors of an output,
    /// over every vector and every frame after the first (the initial state), m for positions.
    pub fn rms_distance(&self, other: &Run, name: &str) -> f64 {
        let n = self.vectors(name).min(other.vectors(name));
        let mut sum = 0.0;
        let mut count = 0usize;
        for f in 1..self.frames().min(other.frames()) {
            for i in 0..n {
                let a = self.vector(name, f, i).unwrap_or([f64::NAN; 3]);
                let b = other.vector(name, f, i).unwrap_or([f64::NAN; 3]);
                sum += (0..3).map(|k| (a[k] - b[k]).powi(2)).sum::<f64>();
                count += 1;
            }
        }
        (sum / count.max(1) as f64).sqrt()
    }

    /// A scalar output at frame `f`, if there is one.
    pub fn scalar(&self, name: &str, f: usize) -> Option<f64> {
        let (v, w) = self.output(name)?;
        (w >= 1).then(|| v.get(f * w).copied()).flatten()
    }

    fn point(&self, name: &str, f: usize, i: usize) -> [f64; 3] {
        let (v, w) = self.output(name).unwrap_or((&[], 0));
        let at = f * w + 3 * i;
        [v[at], v[at + 1], v[at + 2]]
    }

    /// Particle `i` at frame `f` (0-based within the run).
    pub fn position(&self, f: usize, i: usize) -> [f64; 3] {
        self.point("positions", f, i)
    }

    /// Velocity of particle `i` at frame `f`.
    pub fn velocity(&self, f: usize, i: usize) -> [f64; 3] {
        self.point("velocities", f, i)
    }

    /// The `momentum` output at frame `f`.
    pub fn momentum(&self, f: usize) -> [f64; 3] {
        self.point("momentum", f, 0)
    }

    /// The `energy` output at frame `f`.
    pub fn energy(&self, f: usize) -> f64 {
        self.output("energy").map(|(v, _)| v[f]).unwrap_or(f64::NAN)
    }
}

#[cfg(test)]
mod tests {
    use heft_node_sdk::PortSpec;

    use super::*;

    fn spec() -> NodeSpec {
        NodeSpec {
            name: "n".into(),
            inputs: vec![
                PortSpec::new("initial_positions", PortKind::Points, Dimension::Length, "").optional(),
                PortSpec::new("initial_velocities", PortKind::Points, Dimension::Velocity, "").optional(),
            ],
            outputs: REQUIRED_OUTPUTS
                .iter()
                .map(|(n, k, d)| PortSpec::new(n, *k, *d, ""))
                .collect(),
            params: REQUIRED_NUMBERS
                .iter()
                .map(|(n, d)| ParamSpec::number(n, *d, 1.0, (0.0, 2.0), ""))
                .chain(REQUIRED_INTEGERS.iter().map(|n| ParamSpec::integer(n, 1, (1, 9), "")))
                .chain([ParamSpec::choice("pin", &["one_end", "free"], "")])
                .collect(),
            ..NodeSpec::default()
        }
    }

    #[test]
    fn a_complete_spec_has_no_problems() {
        assert_eq!(contract_problems(&spec()), Vec::<String>::new());
    }

    #[test]
    fn each_missing_or_mistyped_piece_is_named() {
        let mut s = spec();
        s.outputs.retain(|o| o.name != "momentum");
        s.outputs[0].dimension = Dimension::Velocity;
        s.params.retain(|p| p.name != "pin" && p.name != "segments");
        s.params.push(ParamSpec::keys("path", Dimension::Length, 2, ""));
        s.inputs
            .push(PortSpec::new("skeleton", PortKind::Transform, Dimension::Length, ""));
        assert_eq!(
            contract_problems(&s),
            [
                "output `positions` is points in Velocity, the contract says points in Length",
                "no output `momentum` (vec3, N s)",
                "required input `skeleton` is not one the kit can drive",
                "no integer parameter `segments`",
                "no choice parameter `pin` with the option `free`",
                "parameter `path` has no default",
            ]
        );
    }
}
