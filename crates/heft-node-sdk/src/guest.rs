//! The plugin side of the boundary: the safe [`Node`] trait node authors implement, and
//! the `extern "C"` glue behind [`crate::export_plugin!`]. Node crates contain no `unsafe`;
//! every raw pointer a host passes is turned into a slice here, once, after checking sizes.

use std::panic::{AssertUnwindSafe, catch_unwind};
use std::sync::Arc;

use crate::abi::{
    ABI_MAJOR, ABI_MINOR, ByteSink, Call, PluginTable, SeriesView, SeriesViewMut, Status, Timeline, Window,
};
use crate::codec;
use crate::descriptor::{CheckProblem, NodeSpec, ParamValue, PluginDescriptor, PortKind};

/// An error a node returns; the host reports it with the node instance's name.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NodeError(pub String);

impl NodeError {
    /// An error with a message.
    pub fn new(msg: impl Into<String>) -> NodeError {
        NodeError(msg.into())
    }
}

impl std::fmt::Display for NodeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for NodeError {}

/// A node type. Implementations are pure: the same parameters and inputs give
/// bit-identical outputs, and they do no file or network I/O.
pub trait Node: 'static {
    /// Ports, parameters and docs. Must return the same value on every call.
    fn spec() -> NodeSpec;

    /// The point count N of every output, in output order (0 for outputs that are not
    /// points). The default takes N from each output's fixed `points` in the spec; a node
    /// whose N depends on parameters or inputs overrides this.
    fn output_points(params: &Params, inputs: &[usize]) -> Result<Vec<usize>, NodeError> {
        let _ = (params, inputs);
        Ok(Self::spec().outputs.iter().map(|p| p.points.unwrap_or(0)).collect())
    }

    /// Computes every output for every frame of the timeline.
    fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError>;

    /// Problems with the parameters, the input widths (values per frame, 0 for an unconnected
    /// input) or the timeline that are certain before evaluating: `heft check` reports them at
    /// the graph's lines (at the parameter a problem names). Cheap, pure and optional: the
    /// default finds none, and a node still refuses at evaluation what it finds there.
    fn check(params: &Params, inputs: &[usize], timeline: Timeline) -> Vec<CheckProblem> {
        let _ = (params, inputs, timeline);
        Vec::new()
    }

    /// True for a node type that can be evaluated in windows of frames ([`Node::advance`]), so
    /// that a long shot's outputs need not be held whole (ABI 1.3). False by default: the host
    /// then calls [`Node::evaluate`] once for the whole timeline.
    const WINDOWED: bool = false;

    /// For a node type with [`Node::WINDOWED`]: computes the outputs of the frames
    /// `io.window()` only (the output slices hold those frames; the inputs hold the whole
    /// timeline), carrying what the next window needs in `carry` (empty at the first window,
    /// which starts at frame 0; windows follow in order without gaps, with the same
    /// parameters and inputs). The outputs must be the bits [`Node::evaluate`] gives for those
    /// frames, whatever the windows; summary values are read after the last window.
    fn advance(params: &Params, carry: &mut Carry, io: &mut Io<'_>) -> Result<(), NodeError> {
        let _ = (params, carry, io);
        Err(NodeError::new("this node type does not run in windows of frames"))
    }
}

/// What a node evaluated in windows carries from one window to the next ([`Node::advance`]):
/// any value of the node's own type, kept by the plugin between calls and dropped by it when
/// the host is done with the node.
#[derive(Default)]
pub struct Carry(Option<Box<dyn std::any::Any + Send>>);

impl std::fmt::Debug for Carry {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(if self.0.is_some() { "Carry(..)" } else { "Carry(empty)" })
    }
}

impl Carry {
    /// The carried value, when one of type `T` is held.
    pub fn get<T: std::any::Any + Send>(&mut self) -> Option<&mut T> {
        self.0.as_mut().and_then(|b| b.downcast_mut::<T>())
    }
    /// Holds `value` (replacing what was held) and returns it.
    pub fn set<T: std::any::Any + Send>(&mut self, value: T) -> &mut T {
        self.0 = Some(Box::new(value));
        self.get::<T>().expect("the value just stored")
    }
    /// True when nothing is held (before the first window).
    pub fn is_empty(&self) -> bool {
        self.0.is_none()
    }
}

/// Parameter values of one node instance, complete (defaults filled in by the host),
/// checked against the spec's types and ranges, in SI units.
#[derive(Debug, Clone)]
pub struct Params {
    names: Arc<[String]>,
    values: Vec<ParamValue>,
}

impl Params {
    /// Pairs a spec's parameter names with values (in spec order). Used by the glue and by
    /// tests that call a node directly.
    pub fn new(spec: &NodeSpec, values: Vec<ParamValue>) -> Result<Params, NodeError> {
        Params::with_names(spec.params.iter().map(|p| p.name.clone()).collect(), values)
    }

    fn with_names(names: Arc<[String]>, values: Vec<ParamValue>) -> Result<Params, NodeError> {
        if values.len() != names.len() {
            return Err(NodeError::new(format!(
                "expected {} parameter values, got {}",
                names.len(),
                values.len()
            )));
        }
        Ok(Params { names, values })
    }

    /// The defaults of a spec, for tests; fails if a parameter has no default.
    pub fn defaults(spec: &NodeSpec) -> Result<Params, NodeError> {
        let values = spec
            .params
            .iter()
            .map(|p| {
                p.default
                    .clone()
                    .ok_or_else(|| NodeError::new(format!("parameter `{}` has no default", p.name)))
            })
            .collect::<Result<Vec<_>, _>>()?;
        Params::new(spec, values)
    }

    /// Replaces one value (for tests and sweeps).
    pub fn with(mut self, name: &str, value: ParamValue) -> Result<Params, NodeError> {
        let i = self.index(name)?;
        self.values[i] = value;
        Ok(self)
    }

    /// The values in spec order.
    pub fn values(&self) -> &[ParamValue] {
        &self.values
    }

    fn index(&self, name: &str) -> Result<usize, NodeError> {
        self.names
            .iter()
            .position(|n| n == name)
            .ok_or_else(|| NodeError::new(format!("no parameter `{name}`")))
    }

    fn get(&self, name: &str) -> Result<&ParamValue, NodeError> {
        Ok(&self.values[self.index(name)?])
    }

    fn wrong(name: &str, want: &str, got: &ParamValue) -> NodeError {
        NodeError::new(format!("parameter `{name}` is a {}, not a {want}", got.type_name()))
    }

    /// A number parameter in SI units.
    pub fn number(&self, name: &str) -> Result<f64, NodeError> {
        match self.get(name)? {
            ParamValue::Number(v) => Ok(*v),
            other => Err(Self::wrong(name, "number", other)),
        }
    }
    /// An integer parameter.
    pub fn integer(&self, name: &str) -> Result<i64, NodeError> {
        match self.get(name)? {
            ParamValue::Integer(v) => Ok(*v),
            other => Err(Self::wrong(name, "integer", other)),
        }
    }
    /// A bool parameter.
    pub fn boolean(&self, name: &str) -> Result<bool, NodeError> {
        match self.get(name)? {
            ParamValue::Bool(v) => Ok(*v),
            other => Err(Self::wrong(name, "bool", other)),
        }
    }
    /// A choice parameter.
    pub fn choice(&self, name: &str) -> Result<&str, NodeError> {
        match self.get(name)? {
            ParamValue::Choice(v) => Ok(v),
            other => Err(Self::wrong(name, "choice", other)),
        }
    }
    /// A vector parameter in SI units.
    pub fn vec3(&self, name: &str) -> Result<[f64; 3], NodeError> {
        match self.get(name)? {
            ParamValue::Vec3(v) => Ok(*v),
            other => Err(Self::wrong(name, "vec3", other)),
        }
    }
    /// A text parameter.
    pub fn text(&self, name: &str) -> Result<&str, NodeError> {
        match self.get(name)? {
            ParamValue::Text(v) => Ok(v),
            other => Err(Self::wrong(name, "text", other)),
        }
    }
    /// A keyframe parameter: (time s, vector SI) in increasing time.
    pub fn keys(&self, name: &str) -> Result<&[(f64, [f64; 3])], NodeError> {
        match self.get(name)? {
            ParamValue::Keys(v) => Ok(v),
            other => Err(Self::wrong(name, "keys", other)),
        }
    }
}

/// Read access to one input series.
#[derive(Debug, Clone, Copy)]
pub struct Series<'a> {
    data: &'a [f64],
    width: usize,
}

impl<'a> Series<'a> {
    /// Wraps a frame-major slice with `width` values per frame.
    pub fn new(data: &'a [f64], width: usize) -> Series<'a> {
        Series { data, width }
    }
    /// Values per frame.
    pub fn width(&self) -> usize {
        self.width
    }
    /// Number of frames held.
    pub fn frames(&self) -> usize {
        self.data.len().checked_div(self.width).unwrap_or(0)
    }
    /// The values of frame `i` (0-based within the call).
    pub fn frame(&self, i: usize) -> &'a [f64] {
        &self.data[i * self.width..(i + 1) * self.width]
    }
    /// Frame `i` as a vector (the first three values).
    pub fn vec3(&self, i: usize) -> [f64; 3] {
        let f = self.frame(i);
        [f[0], f[1], f[2]]
    }
    /// All values.
    pub fn as_slice(&self) -> &'a [f64] {
        self.data
    }
    /// True when the series holds nothing (an unconnected optional input).
    pub fn is_empty(&self) -> bool {
        self.data.is_empty()
    }
}

/// The inputs and outputs of one evaluation.
#[derive(Debug)]
pub struct Io<'a> {
    timeline: Timeline,
    spec: &'a NodeSpec,
    inputs: Vec<Series<'a>>,
    outputs: Vec<&'a mut [f64]>,
    widths: Vec<usize>,
    warnings: Vec<String>,
    summaries: Vec<f64>,
    threads: usize,
    window: std::ops::Range<usize>,
}

impl<'a> Io<'a> {
    /// Assembles an evaluation over borrowed buffers (used by the glue, and by tests that
    /// call a node without the plugin boundary). Output slices must be sized
    /// frames times width.
    pub fn new(
        timeline: Timeline,
        spec: &'a NodeSpec,
        inputs: Vec<Series<'a>>,
        outputs: Vec<&'a mut [f64]>,
        widths: Vec<usize>,
    ) -> Io<'a> {
        Io {
            timeline,
            spec,
            inputs,
            outputs,
            widths,
            warnings: Vec::new(),
            summaries: vec![f64::NAN; spec.summaries.len()],
            threads: 1,
            window: 0..timeline.frames(),
        }
    }
    /// The same evaluation of the frames `window` only (indices into the timeline): the
    /// output slices hold those frames ([`Node::advance`]); [`Io::new`] takes every frame.
    pub fn with_window(mut self, window: std::ops::Range<usize>) -> Io<'a> {
        self.window = window;
        self
    }
    /// The frames whose outputs this call computes, as indices into the timeline: every frame
    /// for [`Node::evaluate`], a window of them for [`Node::advance`]. Output frame `k` is
    /// timeline frame `window().start + k`; inputs always hold the whole timeline.
    pub fn window(&self) -> std::ops::Range<usize> {
        self.window.clone()
    }
    /// The same evaluation, allowed `threads` threads (0 is taken as 1); [`Io::new`] allows one.
    pub fn with_threads(mut self, threads: usize) -> Io<'a> {
        self.threads = threads.max(1);
        self
    }
    /// How many threads the node may use for this call, at least 1: the host's share of its
    /// threads for this node (1 from a host older than ABI 1.2). A node may use fewer, but must
    /// give the same bits for any count.
    pub fn threads(&self) -> usize {
        self.threads
    }
    /// The frames to compute.
    pub fn timeline(&self) -> Timeline {
        self.timeline
    }
    /// Number of frames.
    pub fn frames(&self) -> usize {
        self.timeline.frames()
    }
    /// An input by name. Unconnected optional inputs are empty.
    pub fn input(&self, name: &str) -> Result<Series<'a>, NodeError> {
        let i = self
            .spec
            .inputs
            .iter()
            .position(|p| p.name == name)
            .ok_or_else(|| NodeError::new(format!("no input port `{name}`")))?;
        self.inputs
            .get(i)
            .copied()
            .ok_or_else(|| NodeError::new(format!("input `{name}` was not passed")))
    }
    /// Two different output buffers at once (for a method that writes both in one pass); see
    /// [`Io::outputs`] for any number.
    pub fn output_pair(&mut self, a: &str, b: &str) -> Result<(&mut [f64], &mut [f64]), NodeError> {
        let [(first, _), (second, _)] = self.outputs([a, b])?;
        Ok((first, second))
    }

    /// Any number of different output buffers at once, in the order named, each with its
    /// width (for a node that writes several outputs in one pass over its state). A name
    /// asked for twice, or not an output, is an error.
    pub fn outputs<const N: usize>(&mut self, names: [&str; N]) -> Result<[(&mut [f64], usize); N], NodeError> {
        let mut index = [0usize; N];
        for (k, name) in names.iter().enumerate() {
            let i = self
                .spec
                .outputs
                .iter()
                .position(|p| p.name == *name)
                .ok_or_else(|| NodeError::new(format!("no output port `{name}`")))?;
            if index[..k].contains(&i) {
                return Err(NodeError::new(format!("`{name}` asked for twice")));
            }
            if i >= self.outputs.len() {
                return Err(NodeError::new(format!("output `{name}` was not passed")));
            }
            index[k] = i;
        }
        // Each buffer taken once, by its own index: disjoint borrows of one vector.
        let mut taken: Vec<Option<&mut [f64]>> = self.outputs.iter_mut().map(|s| Some(&mut **s)).collect();
        let widths = &self.widths;
        let mut out: [Option<(&mut [f64], usize)>; N] = std::array::from_fn(|_| None);
        for (slot, &i) in out.iter_mut().zip(&index) {
            *slot = taken[i].take().map(|b| (b, widths.get(i).copied().unwrap_or(0)));
        }
        Ok(out.map(|o| o.unwrap_or((&mut [], 0))))
    }

    /// An output by name, as a frame-major slice; also returns its width.
    pub fn output(&mut self, name: &str) -> Result<(&mut [f64], usize), NodeError> {
        let i = self
            .spec
            .outputs
            .iter()
            .position(|p| p.name == name)
            .ok_or_else(|| NodeError::new(format!("no output port `{name}`")))?;
        let w = self.widths.get(i).copied().unwrap_or(0);
        match self.outputs.get_mut(i) {
            Some(s) => Ok((&mut **s, w)),
            None => Err(NodeError::new(format!("output `{name}` was not passed"))),
        }
    }
    /// Writes a whole output from a function of the frame index (the timeline's index: within
    /// [`Io::window`]).
    pub fn fill(&mut self, name: &str, mut f: impl FnMut(usize, &mut [f64])) -> Result<(), NodeError> {
        let first = self.window.start;
        let (buf, w) = self.output(name)?;
        if w == 0 {
            return Ok(());
        }
        for (i, chunk) in buf.chunks_exact_mut(w).enumerate() {
            f(first + i, chunk);
        }
        Ok(())
    }
    /// Records a warning for the host to show (it names the node instance).
    pub fn warn(&mut self, message: impl Into<String>) {
        self.warnings.push(message.into());
    }
    /// Warnings recorded so far.
    pub fn warnings(&self) -> &[String] {
        &self.warnings
    }
    /// Reports a summary value declared in the spec (SI units).
    pub fn summary(&mut self, name: &str, value: f64) -> Result<(), NodeError> {
        let i = self
            .spec
            .summaries
            .iter()
            .position(|s| s.name == name)
            .ok_or_else(|| NodeError::new(format!("no summary value `{name}`")))?;
        self.summaries[i] = value;
        Ok(())
    }
    /// Summary values reported so far, in spec order (NaN where not reported).
    pub fn summaries(&self) -> &[f64] {
        &self.summaries
    }
}

/// One node type as the glue sees it: plain function pointers, built at compile time.
#[derive(Debug, Clone, Copy)]
pub struct NodeEntry {
    /// The node's spec.
    pub spec: fn() -> NodeSpec,
    /// The node's output point counts.
    pub output_points: fn(&Params, &[usize]) -> Result<Vec<usize>, NodeError>,
    /// The node's evaluation.
    pub evaluate: fn(&Params, &mut Io<'_>) -> Result<(), NodeError>,
    /// The node's check-time problems.
    pub check: fn(&Params, &[usize], Timeline) -> Vec<CheckProblem>,
    /// Whether it runs in windows of frames.
    pub windowed: bool,
    /// Its evaluation of one window.
    pub advance: fn(&Params, &mut Carry, &mut Io<'_>) -> Result<(), NodeError>,
}

impl NodeEntry {
    /// The entry for a node type.
    pub const fn of<N: Node>() -> NodeEntry {
        NodeEntry {
            spec: N::spec,
            output_points: N::output_points,
            evaluate: N::evaluate,
            check: N::check,
            windowed: N::WINDOWED,
            advance: N::advance,
        }
    }
}

/// A node type's spec, computed once per process, and its parameter names.
#[derive(Debug)]
pub struct NodeCache {
    /// The spec.
    pub spec: NodeSpec,
    /// Parameter names in spec order, shared by every call's [`Params`].
    pub names: Arc<[String]>,
}

impl NodeCache {
    /// Computes the cache of one node type.
    pub fn of(entry: &NodeEntry) -> NodeCache {
        let spec = (entry.spec)();
        let names = spec.params.iter().map(|p| p.name.clone()).collect();
        NodeCache { spec, names }
    }
}

/// What [`crate::export_plugin!`] implements for a plugin.
pub trait Exports: 'static {
    /// The plugin name (first half of `plugin.node`).
    const NAME: &'static str;
    /// The plugin version.
    const VERSION: &'static str;
    /// The node types.
    fn nodes() -> &'static [NodeEntry];
    /// The node types' specs, computed once (the macro keeps them in a static of the plugin's own).
    fn cache() -> &'static [NodeCache];
}

/// The plugin's descriptor, built from its node entries.
pub fn descriptor<E: Exports>() -> PluginDescriptor {
    PluginDescriptor {
        name: E::NAME.to_owned(),
        version: E::VERSION.to_owned(),
        nodes: E::nodes().iter().map(|n| (n.spec)()).collect(),
        windowed: (0..)
            .zip(E::nodes())
            .filter(|(_, n)| n.windowed)
            .map(|(i, _)| i)
            .collect(),
    }
}

/// The function table of a plugin; built in a `static` by [`crate::export_plugin!`].
pub const fn table<E: Exports>() -> PluginTable {
    PluginTable {
        abi_major: ABI_MAJOR,
        abi_minor: ABI_MINOR,
        table_size: std::mem::size_of::<PluginTable>(),
        describe: describe::<E>,
        output_points: output_points::<E>,
        evaluate: evaluate::<E>,
        check: check::<E>,
        advance: advance::<E>,
        release,
    }
}

fn panic_text(payload: &(dyn std::any::Any + Send)) -> String {
    if let Some(s) = payload.downcast_ref::<&str>() {
        (*s).to_owned()
    } else if let Some(s) = payload.downcast_ref::<String>() {
        s.clone()
    } else {
        "panic with a non-text payload".to_owned()
    }
}

fn send(sink: ByteSink, bytes: &[u8]) {
    // SAFETY: the host built `sink` for this call; `write` copies `len` bytes from a
    // pointer that is valid for reads of `bytes.len()` bytes for the duration of the call.
    unsafe { (sink.write)(sink.ctx, bytes.as_ptr(), bytes.len()) }
}

thread_local! {
    /// True while this thread runs a node's code inside [`guarded`].
    static GUARDED: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
    /// The message and place of the last panic caught inside [`guarded`] on this thread.
    static CAUGHT: std::cell::RefCell<Option<String>> = const { std::cell::RefCell::new(None) };
}

/// Installs (once) a panic hook that, for a panic inside [`guarded`], keeps the message and
/// its place for the error instead of printing it with a backtrace: the host reports it,
/// naming the node. Any other panic goes to the hook that was there before (a plugin linked
/// into a test binary shares that binary's hook).
fn quiet_hook() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        let before = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if GUARDED.with(std::cell::Cell::get) {
                let place = info.location().map(|l| format!(" (at {}:{})", l.file(), l.line()));
                let text = format!("{}{}", panic_text(info.payload()), place.unwrap_or_default());
                CAUGHT.with(|c| *c.borrow_mut() = Some(text));
            } else {
                before(info);
            }
        }));
    });
}

/// Runs `f`, turning a panic into [`Status::Panic`] with its message (and place) sent to
/// `sink`; the panic prints nothing of its own.
fn guarded(sink: ByteSink, f: impl FnOnce() -> Result<(), (Status, String)>) -> i32 {
    quiet_hook();
    let outer = GUARDED.with(|g| g.replace(true));
    let result = catch_unwind(AssertUnwindSafe(f));
    GUARDED.with(|g| g.set(outer));
    match result {
        Ok(Ok(())) => Status::Ok as i32,
        Ok(Err((status, msg))) => {
            send(sink, msg.as_bytes());
            status as i32
        }
        Err(payload) => {
            let text = CAUGHT
                .with(|c| c.borrow_mut().take())
                .unwrap_or_else(|| panic_text(payload.as_ref()));
            send(sink, text.as_bytes());
            Status::Panic as i32
        }
    }
}

unsafe extern "C" fn describe<E: Exports>(sink: ByteSink) -> i32 {
    guarded(sink, || {
        let bytes = crate::descriptor::encode_descriptor(&descriptor::<E>()).map_err(|e| (Status::BadCall, e))?;
        send(sink, &bytes);
        Ok(())
    })
}

/// The pieces of a call that do not depend on buffers, checked.
struct Decoded {
    entry: NodeEntry,
    spec: &'static NodeSpec,
    params: Params,
}

fn bad(msg: impl Into<String>) -> (Status, String) {
    (Status::BadCall, msg.into())
}

fn decode_call<E: Exports>(call: &Call) -> Result<Decoded, (Status, String)> {
    let index = call.node_index as usize;
    let (Some(&entry), Some(cache)) = (E::nodes().get(index), E::cache().get(index)) else {
        return Err(bad(format!("no node type with index {index}")));
    };
    let spec = &cache.spec;
    let bytes: &[u8] = if call.params.len == 0 {
        &[]
    } else {
        // SAFETY: the host passes parameter bytes valid for `len` bytes for the whole call.
        unsafe { std::slice::from_raw_parts(call.params.data, call.params.len) }
    };
    let values: Vec<ParamValue> = codec::decode(bytes).map_err(|e| bad(format!("parameters: {e}")))?;
    let params = Params::with_names(Arc::clone(&cache.names), values).map_err(|e| bad(e.0))?;
    Ok(Decoded { entry, spec, params })
}

/// The host's call, read as far as the host's `struct_size` says it goes: the fields of a
/// version the host predates (`threads` before ABI 1.2) are left at their defaults (1 thread),
/// never read past the host's struct. `None` when the call is too small to be any version's,
/// or the pointer is null.
///
/// # Safety
/// `call` is null or points to a call of at least the `struct_size` bytes it starts with (and
/// at least that one field), alive for the read.
unsafe fn read_call(call: *const Call) -> Option<Call> {
    if call.is_null() {
        return None;
    }
    // SAFETY: every version of the call starts with its size (the caller's contract).
    let size = unsafe { call.cast::<usize>().read_unaligned() };
    if size >= std::mem::size_of::<Call>() {
        // SAFETY: the host's call holds every field of this version's.
        return Some(unsafe { call.read() });
    }
    // Older versions: the fields up to the last whole version boundary the host's struct
    // covers, copied over a call of defaults.
    let before_summaries = std::mem::offset_of!(Call, summaries);
    let bytes = if size >= crate::abi::CALL_SIZE_1_1 {
        crate::abi::CALL_SIZE_1_1
    } else if size >= before_summaries {
        before_summaries
    } else {
        return None;
    };
    unsafe extern "C" fn drop_bytes(_: *mut std::ffi::c_void, _: *const u8, _: usize) {}
    let none = ByteSink {
        ctx: std::ptr::null_mut(),
        write: drop_bytes,
    };
    let mut out = Call {
        struct_size: size,
        node_index: 0,
        params: crate::abi::ByteView {
            data: std::ptr::null(),
            len: 0,
        },
        timeline: Timeline {
            start_frame: 0,
            frame_count: 0,
            rate_num: 1,
            rate_den: 1,
        },
        inputs: std::ptr::null(),
        input_count: 0,
        outputs: std::ptr::null(),
        output_count: 0,
        message: none,
        warning: none,
        summaries: std::ptr::null_mut(),
        summary_count: 0,
        threads: 1,
    };
    // SAFETY: `bytes` is at most `size`, so the host's struct holds them (the caller's contract);
    // it ends on a field boundary of `Call`, and fields are only ever appended, so the bytes are
    // whole fields of the same types at the same offsets, written by the host as valid values.
    // `out` is a distinct local of `size_of::<Call>()` bytes.
    unsafe {
        std::ptr::copy_nonoverlapping(call.cast::<u8>(), (&raw mut out).cast::<u8>(), bytes);
    }
    Some(out)
}

/// The threads the host gives the call: its `threads` when its call is large enough to hold the
/// field (ABI 1.2), else 1; never 0.
fn call_threads(call: &Call) -> usize {
    if call.struct_size >= std::mem::offset_of!(Call, threads) + std::mem::size_of::<usize>() {
        call.threads.max(1)
    } else {
        1
    }
}

fn input_views(call: &Call) -> &[SeriesView] {
    if call.input_count == 0 {
        return &[];
    }
    // SAFETY: the host passes `input_count` initialised views that live for the call.
    unsafe { std::slice::from_raw_parts(call.inputs, call.input_count) }
}

unsafe extern "C" fn output_points<E: Exports>(call: *const Call, points: *mut usize, count: usize) -> i32 {
    // SAFETY: the host passes a pointer to a `Call` of its own version, alive for this call.
    let Some(call) = (unsafe { read_call(call) }) else {
        return Status::BadCall as i32;
    };
    let call = &call;
    guarded(call.message, || {
        let d = decode_call::<E>(call)?;
        let widths: Vec<usize> = input_views(call).iter().map(|v| v.width).collect();
        let n = (d.entry.output_points)(&d.params, &widths).map_err(|e| (Status::NodeError, e.0))?;
        if n.len() != count || n.len() != d.spec.outputs.len() {
            return Err(bad(format!(
                "node `{}` reports {} output shapes for {} outputs",
                d.spec.name,
                n.len(),
                d.spec.outputs.len()
            )));
        }
        if count > 0 {
            // SAFETY: the host passes room for `count` values that lives for the call.
            let out = unsafe { std::slice::from_raw_parts_mut(points, count) };
            out.copy_from_slice(&n);
        }
        Ok(())
    })
}

unsafe extern "C" fn check<E: Exports>(call: *const Call, problems: ByteSink) -> i32 {
    // SAFETY: the host passes a pointer to a `Call` of its own version, alive for this call.
    let Some(call) = (unsafe { read_call(call) }) else {
        return Status::BadCall as i32;
    };
    let call = &call;
    guarded(call.message, || {
        let d = decode_call::<E>(call)?;
        let widths: Vec<usize> = input_views(call).iter().map(|v| v.width).collect();
        let found = (d.entry.check)(&d.params, &widths, call.timeline);
        let bytes = codec::encode(&found).map_err(bad)?;
        send(problems, &bytes);
        Ok(())
    })
}

unsafe extern "C" fn evaluate<E: Exports>(call: *const Call) -> i32 {
    // SAFETY: the host passes a pointer to a `Call` of its own version, alive for this call.
    let Some(call) = (unsafe { read_call(call) }) else {
        return Status::BadCall as i32;
    };
    let call = &call;
    guarded(call.message, || evaluate_call::<E>(call, None))
}

unsafe extern "C" fn advance<E: Exports>(call: *const Call, window: Window, carry: *mut *mut std::ffi::c_void) -> i32 {
    // SAFETY: the host passes a pointer to a `Call` of its own version, alive for this call.
    let Some(call) = (unsafe { read_call(call) }) else {
        return Status::BadCall as i32;
    };
    let call = &call;
    guarded(call.message, || {
        if carry.is_null() {
            return Err(bad("no slot for the node's carry"));
        }
        // SAFETY: the host passes its slot for this node's carry, exclusively for the call:
        // null before the first window, else the pointer stored below at an earlier window of
        // the same node, not yet released.
        let slot = unsafe { &mut *carry };
        let held: &mut Carry = if slot.is_null() {
            let fresh = Box::into_raw(Box::new(Carry::default()));
            *slot = fresh.cast();
            // SAFETY: just allocated, owned by the slot until `release`.
            unsafe { &mut *fresh }
        } else {
            // SAFETY: a pointer this function stored from `Box<Carry>`, alive until `release`.
            unsafe { &mut *slot.cast::<Carry>() }
        };
        evaluate_call::<E>(call, Some((window, held)))
    })
}

unsafe extern "C" fn release(_node_index: u32, carry: *mut std::ffi::c_void) {
    if carry.is_null() {
        return;
    }
    // A node's value that panics as it is dropped must not unwind into the host.
    let _ = catch_unwind(AssertUnwindSafe(|| {
        // SAFETY: `carry` is a pointer `advance` stored from `Box<Carry>`, which the host
        // releases once.
        drop(unsafe { Box::from_raw(carry.cast::<Carry>()) });
    }));
}

/// Evaluates a call: the whole timeline, or with `window` the frames of one window with the
/// node's carry.
fn evaluate_call<E: Exports>(call: &Call, window: Option<(Window, &mut Carry)>) -> Result<(), (Status, String)> {
    let d = decode_call::<E>(call)?;
    if call.input_count != d.spec.inputs.len() || call.output_count != d.spec.outputs.len() {
        return Err(bad("port count does not match the node type"));
    }
    let frames = call.timeline.frames();
    let (range, carry) = match window {
        None => (0..frames, None),
        Some((w, carry)) => {
            if !d.entry.windowed {
                return Err(bad(format!("node `{}` does not run in windows of frames", d.spec.name)));
            }
            let first = usize::try_from(w.first).ok();
            let end = first
                .zip(usize::try_from(w.count).ok())
                .and_then(|(a, n)| a.checked_add(n));
            match (first, end) {
                (Some(a), Some(b)) if b <= frames => (a..b, Some(carry)),
                _ => return Err(bad("a window outside the timeline")),
            }
        }
    };
    let mut inputs = Vec::with_capacity(call.input_count);
    for (view, port) in input_views(call).iter().zip(&d.spec.inputs) {
        if view.len == 0 {
            inputs.push(Series::new(&[], view.width));
            continue;
        }
        if Some(view.len) != frames.checked_mul(view.width) {
            return Err(bad(format!("input `{}` has the wrong length", port.name)));
        }
        // SAFETY: the host passes `len` initialised values per view, alive for the call
        // and not written by anyone during it.
        let data = unsafe { std::slice::from_raw_parts(view.data, view.len) };
        inputs.push(Series::new(data, view.width));
    }
    let out_views: &[SeriesViewMut] = if call.output_count == 0 {
        &[]
    } else {
        // SAFETY: the host passes `output_count` views that live for the call.
        unsafe { std::slice::from_raw_parts(call.outputs, call.output_count) }
    };
    let mut outputs = Vec::with_capacity(out_views.len());
    let mut widths = Vec::with_capacity(out_views.len());
    for (view, port) in out_views.iter().zip(&d.spec.outputs) {
        if Some(view.len) != range.len().checked_mul(view.width)
            || (port.kind != PortKind::Points && view.width != port.kind.width(0))
        {
            return Err(bad(format!("output `{}` has the wrong size", port.name)));
        }
        let data: &mut [f64] = if view.len == 0 {
            &mut []
        } else {
            // SAFETY: the host allocates each output separately (no two views overlap
            // and none overlaps an input), `len` values long, exclusively for this call.
            unsafe { std::slice::from_raw_parts_mut(view.data, view.len) }
        };
        outputs.push(data);
        widths.push(view.width);
    }
    let mut io = Io::new(call.timeline, d.spec, inputs, outputs, widths)
        .with_threads(call_threads(call))
        .with_window(range);
    let result = match carry {
        None => (d.entry.evaluate)(&d.params, &mut io),
        Some(carry) => (d.entry.advance)(&d.params, carry, &mut io),
    };
    for w in io.warnings() {
        send(call.warning, w.as_bytes());
    }
    let has_summaries = call.struct_size >= std::mem::offset_of!(Call, summary_count) + std::mem::size_of::<usize>();
    if has_summaries && call.summary_count > 0 {
        if call.summary_count != io.summaries().len() {
            return Err(bad("summary count does not match the node type"));
        }
        // SAFETY: the host passes room for `summary_count` values, alive and exclusive for the call.
        let out = unsafe { std::slice::from_raw_parts_mut(call.summaries, call.summary_count) };
        out.copy_from_slice(io.summaries());
    }
    result.map_err(|e| (Status::NodeError, e.0))
}

/// Exports a plugin: the entry symbol and a safe `plugin_table()` for static linking.
///
/// ```ignore
/// heft_node_sdk::export_plugin!(name: "trajectory", nodes: [Ballistic, Keyed]);
/// ```
#[macro_export]
macro_rules! export_plugin {
    (name: $name:expr, nodes: [$($node:ty),+ $(,)?] $(,)?) => {
        // The host catches a node's panic and names the node; with panic = "abort" a panic
        // would end heft unnamed, so such a plugin does not build.
        #[cfg(not(panic = "unwind"))]
        compile_error!(
            "a heft plugin must be built with panic = \"unwind\" (set it in the [profile] sections of Cargo.toml): \
             with \"abort\", a panic in a node would end heft without naming it"
        );

        #[doc(hidden)]
        #[derive(Debug)]
        pub struct __HeftExports;

        impl $crate::guest::Exports for __HeftExports {
            const NAME: &'static str = $name;
            const VERSION: &'static str = env!("CARGO_PKG_VERSION");
            fn nodes() -> &'static [$crate::guest::NodeEntry] {
                static NODES: &[$crate::guest::NodeEntry] = &[$($crate::guest::NodeEntry::of::<$node>()),+];
                NODES
            }
            fn cache() -> &'static [$crate::guest::NodeCache] {
                static CACHE: ::std::sync::OnceLock<::std::vec::Vec<$crate::guest::NodeCache>> =
                    ::std::sync::OnceLock::new();
                CACHE.get_or_init(|| Self::nodes().iter().map($crate::guest::NodeCache::of).collect())
            }
        }

        static __HEFT_TABLE: $crate::abi::PluginTable = $crate::guest::table::<__HeftExports>();

        /// This plugin's function table, for linking it statically into a host.
        pub fn plugin_table() -> &'static $crate::abi::PluginTable {
            &__HEFT_TABLE
        }

        /// The plugin entry symbol (`heft_node_sdk::abi::ENTRY_SYMBOL`).
        // SAFETY: exporting an unmangled symbol is unsafe only if another symbol of the same
        // name exists in the library; the SDK's versioned name is reserved for this macro,
        // which a crate can invoke once.
        // (no allow(unsafe_code) here: lints do not fire in an external macro, and an allow would clash with a forbid)
        #[unsafe(no_mangle)]
        pub extern "C" fn heft_plugin_entry_v1() -> *const $crate::abi::PluginTable {
            &__HEFT_TABLE
        }
    };
}

#[cfg(all(test, feature = "host"))]
mod tests {
    use super::*;
    use crate::descriptor::{ParamSpec, PortSpec, SummarySpec};
    use crate::host::Plugin;
    use crate::units::Dimension;

    /// Writes `scale` times the frame index; panics when `scale` is negative.
    #[derive(Debug)]
    struct Ramp;
    impl Node for Ramp {
        fn spec() -> NodeSpec {
            NodeSpec {
                name: "ramp".into(),
                doc: "A ramp.".into(),
                notes: String::new(),
                summaries: vec![SummarySpec::new("top", Dimension::Length, "The last value.")],
                inputs: vec![],
                outputs: vec![PortSpec::new("value", PortKind::Scalar, Dimension::Length, "Ramp.")],
                params: vec![ParamSpec::number(
                    "scale",
                    Dimension::Length,
                    1.0,
                    (-10.0, 10.0),
                    "Slope.",
                )],
            }
        }
        fn check(params: &Params, _: &[usize], _: Timeline) -> Vec<CheckProblem> {
            match params.number("scale") {
                Ok(s) if s < 0.0 => vec![
                    CheckProblem::at("scale", format!("a negative scale {s} m runs the ramp down"))
                        .help("give a scale of 0 or more"),
                ],
                _ => Vec::new(),
            }
        }
        fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
            let s = params.number("scale")?;
            assert!(s >= 0.0, "negative scale {s}");
            if s == 0.0 {
                return Err(NodeError::new("a flat ramp is not a ramp"));
            }
            io.warn("ramp warns once");
            io.summary("top", s * (io.frames() - 1) as f64)?;
            io.fill("value", |i, out| out[0] = s * i as f64)
        }
    }

    /// Writes the thread count it was given at every frame.
    #[derive(Debug)]
    struct Threads;
    impl Node for Threads {
        fn spec() -> NodeSpec {
            NodeSpec {
                name: "threads".into(),
                doc: "Its thread budget.".into(),
                notes: String::new(),
                summaries: vec![],
                inputs: vec![],
                outputs: vec![PortSpec::new(
                    "count",
                    PortKind::Scalar,
                    Dimension::Dimensionless,
                    "Threads.",
                )],
                params: vec![],
            }
        }
        fn evaluate(_: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
            let n = io.threads() as f64;
            io.fill("count", |_, out| out[0] = n)
        }
    }

    thread_local! {
        /// Carried values alive on this thread (made by `Sum::advance`, dropped by `release`;
        /// a statically linked plugin runs on the test's thread).
        static LIVE: std::cell::Cell<isize> = const { std::cell::Cell::new(0) };
    }

    /// What `Sum` carries: the running total and the next frame it expects.
    struct Running {
        total: f64,
        next: usize,
    }
    impl Drop for Running {
        fn drop(&mut self) {
            LIVE.with(|l| l.set(l.get() - 1));
        }
    }

    /// The running sum of the input: a node with state that runs in windows.
    #[derive(Debug)]
    struct Sum;
    impl Node for Sum {
        fn spec() -> NodeSpec {
            NodeSpec {
                name: "sum".into(),
                doc: "A running sum.".into(),
                notes: String::new(),
                summaries: vec![SummarySpec::new("total", Dimension::Length, "The sum.")],
                inputs: vec![PortSpec::new("value", PortKind::Scalar, Dimension::Length, "Summed.")],
                outputs: vec![PortSpec::new("sum", PortKind::Scalar, Dimension::Length, "So far.")],
                params: vec![],
            }
        }
        const WINDOWED: bool = true;
        fn evaluate(params: &Params, io: &mut Io<'_>) -> Result<(), NodeError> {
            Sum::advance(params, &mut Carry::default(), io)
        }
        fn advance(_: &Params, carry: &mut Carry, io: &mut Io<'_>) -> Result<(), NodeError> {
            let input = io.input("value")?;
            let window = io.window();
            if carry.is_empty() {
                LIVE.with(|l| l.set(l.get() + 1));
                carry.set(Running { total: 0.0, next: 0 });
            }
            let run = carry
                .get::<Running>()
                .ok_or_else(|| NodeError::new("a carry of another type"))?;
            if window.start != run.next {
                return Err(NodeError::new(format!(
                    "window from frame {} after frame {}",
                    window.start, run.next
                )));
            }
            let mut total = run.total;
            let (out, _) = io.output("sum")?;
            for (o, i) in out.iter_mut().zip(window.clone()) {
                total += input.frame(i)[0];
                *o = total;
            }
            let run = carry
                .get::<Running>()
                .ok_or_else(|| NodeError::new("a carry of another type"))?;
            (run.total, run.next) = (total, window.end);
            if window.end == io.frames() {
                io.summary("total", total)?;
            }
            Ok(())
        }
    }

    crate::export_plugin!(name: "unit", nodes: [Ramp, Threads, Sum]);

    /// A windowed node gives the bits of its whole evaluation in windows of any sizes, through
    /// the plugin table; its carry is freed when the host drops it, after the last window or
    /// after an early stop; a window out of order is the node's error.
    #[test]
    fn a_node_in_windows_gives_the_bits_of_its_whole_evaluation() {
        use crate::abi::Window;
        use crate::host::Carry as HostCarry;
        let p = Plugin::from_static(plugin_table(), "unit").expect("loads");
        assert!(p.windowed(2) && !p.windowed(0) && !p.windowed(1));
        assert_eq!(p.descriptor().windowed, [2]);
        let frames = 11;
        let input: Vec<f64> = (0..frames)
            .map(|i| 0.1 * f64::from(i) + 1.0 / (1.0 + f64::from(i)))
            .collect();
        let mut whole = vec![f64::NAN; frames as usize];
        let mut total = [f64::NAN];
        p.evaluate(
            2,
            &[0],
            tl(frames as u64),
            &[(&input, 1)],
            &mut [(&mut whole, 1)],
            &mut total,
        )
        .expect("evaluates");
        for sizes in [vec![11], vec![1; 11], vec![3, 3, 3, 2], vec![5, 1, 5]] {
            let mut carry = HostCarry::new(2);
            let mut joined = Vec::new();
            let mut first = 0u64;
            let mut summary = [f64::NAN];
            for n in sizes.iter().map(|&n| n as u64) {
                let mut out = vec![f64::NAN; n as usize];
                let window = Window { first, count: n };
                p.advance(
                    2,
                    &[0],
                    tl(frames as u64),
                    window,
                    &[(&input, 1)],
                    &mut [(&mut out, 1)],
                    &mut summary,
                    1,
                    &mut carry,
                )
                .expect("advances");
                joined.extend(out);
                first += n;
                assert_eq!(LIVE.with(std::cell::Cell::get), 1, "one carry alive");
            }
            drop(carry);
            assert_eq!(
                joined.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                whole.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                "{sizes:?}"
            );
            assert_eq!(summary[0].to_bits(), total[0].to_bits());
        }
        // Stopped after one window, and a window out of order.
        let mut carry = HostCarry::new(2);
        let mut out = vec![f64::NAN; 2];
        let mut summary = [f64::NAN];
        let w = |first, count| Window { first, count };
        p.advance(
            2,
            &[0],
            tl(11),
            w(0, 2),
            &[(&input, 1)],
            &mut [(&mut out, 1)],
            &mut summary,
            1,
            &mut carry,
        )
        .expect("advances");
        let e = p
            .advance(
                2,
                &[0],
                tl(11),
                w(4, 2),
                &[(&input, 1)],
                &mut [(&mut out, 1)],
                &mut summary,
                1,
                &mut carry,
            )
            .expect_err("out of order");
        assert!(e.to_string().contains("window from frame 4 after frame 2"), "{e}");
        let e = p
            .advance(
                2,
                &[0],
                tl(11),
                w(10, 2),
                &[(&input, 1)],
                &mut [(&mut out, 1)],
                &mut summary,
                1,
                &mut carry,
            )
            .expect_err("past the end");
        assert!(e.to_string().contains("outside the timeline"), "{e}");
        drop(carry);
        assert_eq!(LIVE.with(std::cell::Cell::get), 0, "every carry released");
        // A node type that does not run in windows is refused by the host before any call.
        let mut carry = HostCarry::new(0);
        let e = p
            .advance(
                0,
                &[0],
                tl(2),
                w(0, 2),
                &[],
                &mut [(&mut out, 1)],
                &mut summary,
                1,
                &mut carry,
            )
            .expect_err("not windowed");
        assert!(e.to_string().contains("does not run in windows"), "{e}");
    }

    /// A plugin built for ABI 1.2 (a table ending at `check`) loads, keeps its check, and runs
    /// whole: no node type of it is windowed, even one its descriptor names.
    static TABLE_1_2: crate::host::Table12 = {
        let t = table::<__HeftExports>();
        crate::host::Table12 {
            abi_major: 1,
            abi_minor: 2,
            table_size: crate::abi::TABLE_SIZE_1_2,
            describe: t.describe,
            output_points: t.output_points,
            evaluate: t.evaluate,
            check: t.check,
        }
    };

    #[test]
    fn a_plugin_of_abi_1_2_loads_checks_and_runs_whole() {
        // SAFETY: `TABLE_1_2` is a static with the 1.2 layout, valid for the whole program.
        let p = unsafe { Plugin::from_raw((&raw const TABLE_1_2).cast(), "abi 1.2".into()) }.expect("loads");
        assert!(!p.windowed(2));
        let params = Plugin::encode_params(&[ParamValue::Number(-2.0)]).expect("encodes");
        assert_eq!(p.check(0, &params, tl(4), &[]).expect("checks").len(), 1);
        let input = [1.0, 2.0];
        let mut out = vec![f64::NAN; 2];
        p.evaluate(2, &[0], tl(2), &[(&input, 1)], &mut [(&mut out, 1)], &mut [f64::NAN])
            .expect("evaluates whole");
        assert_eq!(out, [1.0, 3.0]);
    }

    /// The call as a host of ABI 1.1 built it: every field before `threads`.
    #[repr(C)]
    struct Call11 {
        struct_size: usize,
        node_index: u32,
        params: crate::abi::ByteView,
        timeline: Timeline,
        inputs: *const SeriesView,
        input_count: usize,
        outputs: *const SeriesViewMut,
        output_count: usize,
        message: ByteSink,
        warning: ByteSink,
        summaries: *mut f64,
        summary_count: usize,
    }

    unsafe extern "C" fn keep_bytes(ctx: *mut std::ffi::c_void, data: *const u8, len: usize) {
        // SAFETY: the tests below pass a `&mut Vec<u8>` as `ctx`, and the glue `len` bytes at `data`.
        unsafe { (*ctx.cast::<Vec<u8>>()).extend_from_slice(std::slice::from_raw_parts(data, len)) };
    }

    /// The `threads` node evaluated over 3 frames by a host of ABI 1.1, whose call ends before
    /// `threads`, and by the one before it, whose call also ends before `summaries`.
    fn threads_from_an_old_host(size: usize) -> (i32, Vec<f64>, String) {
        let mut out = [f64::NAN; 3];
        let views = [SeriesViewMut {
            data: out.as_mut_ptr(),
            len: 3,
            width: 1,
        }];
        let params = Plugin::encode_params(&[]).expect("encodes");
        let mut message = Vec::new();
        let sink = ByteSink {
            ctx: (&raw mut message).cast(),
            write: keep_bytes,
        };
        let call = Call11 {
            struct_size: size,
            node_index: 1,
            params: crate::abi::ByteView {
                data: params.as_ptr(),
                len: params.len(),
            },
            timeline: tl(3),
            inputs: std::ptr::null(),
            input_count: 0,
            outputs: views.as_ptr(),
            output_count: 1,
            message: sink,
            warning: sink,
            summaries: std::ptr::null_mut(),
            summary_count: 0,
        };
        // SAFETY: `call` has the layout of a 1.1 host's call, at least `size` bytes long (the
        // sizes passed below), and everything it points to lives across the call.
        let code = unsafe { (plugin_table().evaluate)((&raw const call).cast()) };
        (code, out.to_vec(), String::from_utf8_lossy(&message).into_owned())
    }

    /// A host built before ABI 1.2 passes a call without `threads`: the node is given one thread,
    /// and nothing past the host's call is read. A call too small to be any version's is refused.
    #[test]
    fn a_host_before_abi_1_2_gives_one_thread() {
        assert_eq!(std::mem::size_of::<Call11>(), crate::abi::CALL_SIZE_1_1);
        for size in [crate::abi::CALL_SIZE_1_1, std::mem::offset_of!(Call, summaries)] {
            let (code, out, message) = threads_from_an_old_host(size);
            assert_eq!((code, message.as_str()), (Status::Ok as i32, ""), "size {size}");
            assert_eq!(out, [1.0, 1.0, 1.0], "size {size}");
        }
        let (code, out, _) = threads_from_an_old_host(std::mem::offset_of!(Call, summaries) - 1);
        assert_eq!(code, Status::BadCall as i32);
        assert!(out.iter().all(|v| v.is_nan()), "{out:?}");
    }

    /// This host gives the node the threads it is asked to (0 taken as 1); `evaluate` gives one.
    #[test]
    fn the_host_gives_the_threads_it_is_asked_to() {
        let p = Plugin::from_static(plugin_table(), "unit").expect("loads");
        let run = |threads: Option<usize>| {
            let mut out = vec![f64::NAN; 2];
            match threads {
                Some(n) => p.evaluate_with_threads(1, &[0], tl(2), &[], &mut [(&mut out, 1)], &mut [], n),
                None => p.evaluate(1, &[0], tl(2), &[], &mut [(&mut out, 1)], &mut []),
            }
            .expect("evaluates");
            out
        };
        assert_eq!(run(None), [1.0, 1.0]);
        assert_eq!(run(Some(0)), [1.0, 1.0]);
        assert_eq!(run(Some(3)), [3.0, 3.0]);
        assert_eq!(run(Some(64)), [64.0, 64.0]);
    }

    /// A plugin built for ABI 1.1 reads the call through its own, shorter layout: this host's
    /// call of 1.2 starts with exactly those fields, so it evaluates as before with any thread
    /// count.
    unsafe extern "C" fn evaluate_as_1_1(call: *const Call) -> i32 {
        // SAFETY: the host's call is at least as large as a 1.1 call (fields are only appended).
        let call = unsafe { &*call.cast::<Call11>() };
        if call.output_count != 1 || call.struct_size < std::mem::size_of::<Call11>() {
            return Status::BadCall as i32;
        }
        // SAFETY: the host passes one output view, and its `len` values, alive for the call.
        let out = unsafe {
            let view = &*call.outputs;
            std::slice::from_raw_parts_mut(view.data, view.len)
        };
        for (i, v) in out.iter_mut().enumerate() {
            *v = (call.timeline.start_frame + i as i64) as f64;
        }
        Status::Ok as i32
    }
    static TABLE_1_1: PluginTable = PluginTable {
        abi_minor: 1,
        evaluate: evaluate_as_1_1,
        ..table::<__HeftExports>()
    };

    #[test]
    fn a_plugin_of_abi_1_1_evaluates_under_this_host() {
        let p = Plugin::from_static(&TABLE_1_1, "abi 1.1").expect("loads");
        let mut out = vec![f64::NAN; 4];
        let timeline = Timeline {
            start_frame: 10,
            ..tl(4)
        };
        p.evaluate_with_threads(1, &[0], timeline, &[], &mut [(&mut out, 1)], &mut [], 4)
            .expect("evaluates");
        assert_eq!(out, [10.0, 11.0, 12.0, 13.0]);
    }

    /// A table whose description is bytes no SDK wrote (a plugin of another SDK that kept the
    /// ABI number): its functions other than `describe` are never called.
    unsafe extern "C" fn garbled(sink: ByteSink) -> i32 {
        let junk = [0xffu8, 0x00, 0x07];
        // SAFETY: the host built `sink` for this call; `junk` is valid for its length.
        unsafe { (sink.write)(sink.ctx, junk.as_ptr(), junk.len()) };
        Status::Ok as i32
    }
    static GARBLED: PluginTable = PluginTable {
        describe: garbled,
        ..table::<__HeftExports>()
    };

    /// Three outputs borrowed at once, in any order, each written through its own slice; a
    /// name twice or an unknown name is an error.
    #[test]
    fn any_number_of_outputs_can_be_borrowed_at_once() {
        let spec = NodeSpec {
            name: "three".into(),
            doc: String::new(),
            notes: String::new(),
            summaries: vec![],
            inputs: vec![],
            outputs: ["a", "b", "c"]
                .iter()
                .map(|n| PortSpec::new(n, PortKind::Vec3, Dimension::Length, "out"))
                .collect(),
            params: vec![],
        };
        let (mut a, mut b, mut c) = (vec![0.0; 6], vec![0.0; 6], vec![0.0; 6]);
        let mut io = Io::new(tl(2), &spec, vec![], vec![&mut a, &mut b, &mut c], vec![3, 3, 3]);
        let [(c_out, wc), (a_out, wa), (b_out, _)] = io.outputs(["c", "a", "b"]).expect("three at once");
        assert_eq!((wc, wa), (3, 3));
        c_out.fill(3.0);
        a_out.fill(1.0);
        b_out.fill(2.0);
        assert!(io.outputs(["a", "a"]).unwrap_err().0.contains("`a` asked for twice"));
        assert!(io.outputs(["d"]).unwrap_err().0.contains("no output port `d`"));
        drop(io);
        assert_eq!((a[5], b[5], c[5]), (1.0, 2.0, 3.0));
    }

    /// A plugin built for ABI 1.0 (a table without `check`) still loads and evaluates; a
    /// check asks it nothing and finds nothing. The same node with the hook reports its
    /// problem, naming the parameter.
    static OLD: crate::host::Table10 = {
        let t = table::<__HeftExports>();
        crate::host::Table10 {
            abi_major: 1,
            abi_minor: 0,
            table_size: crate::abi::TABLE_SIZE_1_0,
            describe: t.describe,
            output_points: t.output_points,
            evaluate: t.evaluate,
        }
    };

    #[test]
    fn a_plugin_of_abi_1_0_loads_and_the_check_hook_reports_where_present() {
        let params = Plugin::encode_params(&[ParamValue::Number(-2.0)]).expect("encodes");
        // SAFETY: `OLD` is a static with the 1.0 layout, valid for the whole program.
        let old = unsafe { Plugin::from_raw((&raw const OLD).cast(), "abi 1.0".into()) }.expect("loads");
        assert!(old.check(0, &params, tl(4), &[]).expect("asks nothing").is_empty());
        let (out, ..) = call(&old, 2.0, 4).expect("evaluates");
        assert_eq!(out, [0.0, 2.0, 4.0, 6.0]);
        let new = Plugin::from_static(plugin_table(), "unit").expect("loads");
        let found = new.check(0, &params, tl(4), &[]).expect("checks");
        assert_eq!(
            found,
            [CheckProblem::at("scale", "a negative scale -2 m runs the ramp down").help("give a scale of 0 or more")]
        );
        assert!(
            new.check(
                0,
                &Plugin::encode_params(&[ParamValue::Number(1.0)]).expect("encodes"),
                tl(4),
                &[]
            )
            .expect("checks")
            .is_empty()
        );
    }

    /// A description heft cannot read is refused with a plain message that says what to do,
    /// not a decoder's internals alone.
    #[test]
    fn an_unreadable_description_is_refused_plainly() {
        let e = Plugin::from_static(&GARBLED, "garbled").expect_err("unreadable");
        let text = e.to_string();
        assert!(
            text.contains("its description of itself cannot be read by this heft")
                && text.contains("rebuild it against this heft's heft-node-sdk"),
            "{text}"
        );
    }

    fn tl(n: u64) -> Timeline {
        Timeline {
            start_frame: 0,
            frame_count: n,
            rate_num: 24,
            rate_den: 1,
        }
    }

    type Called = (Vec<f64>, Vec<String>, Vec<f64>);

    fn call(p: &Plugin, scale: f64, out_len: usize) -> Result<Called, crate::host::CallError> {
        let bytes = Plugin::encode_params(&[ParamValue::Number(scale)]).expect("encodes");
        let mut out = vec![0.0; out_len];
        let mut summaries = vec![f64::NAN];
        let warnings = p.evaluate(0, &bytes, tl(4), &[], &mut [(&mut out, 1)], &mut summaries)?;
        Ok((out, warnings, summaries))
    }

    #[test]
    fn the_glue_describes_evaluates_and_passes_warnings() {
        let p = Plugin::from_static(plugin_table(), "unit").expect("loads");
        assert_eq!(p.descriptor().name, "unit");
        assert_eq!(p.descriptor().nodes[0], Ramp::spec());
        let (out, warnings, summaries) = call(&p, 0.5, 4).expect("evaluates");
        assert_eq!(out, [0.0, 0.5, 1.0, 1.5]);
        assert_eq!(warnings, ["ramp warns once"]);
        assert_eq!(summaries, [1.5]);
    }

    #[test]
    fn errors_and_panics_come_back_as_statuses() {
        let p = Plugin::from_static(plugin_table(), "unit").expect("loads");
        let e = call(&p, 0.0, 4).expect_err("node error");
        assert_eq!(
            (e.status, e.message.as_str()),
            (Status::NodeError, "a flat ramp is not a ramp")
        );
        let e = call(&p, -1.0, 4).expect_err("panic");
        assert_eq!(e.status, Status::Panic);
        assert!(e.message.contains("negative scale -1"), "{}", e.message);
        let e = call(&p, 1.0, 3).expect_err("short buffer");
        assert_eq!(e.status, Status::BadCall);
        assert!(e.message.contains("output `value` has the wrong size"), "{}", e.message);
        let e = p
            .evaluate(7, &[], tl(1), &[], &mut [], &mut [])
            .expect_err("no such node");
        assert_eq!(e.status, Status::BadCall);
        let e = p
            .evaluate(0, &[1, 2, 3], tl(1), &[], &mut [], &mut [])
            .expect_err("garbage parameters");
        assert_eq!(e.status, Status::BadCall);
        assert!(e.message.starts_with("parameters:"), "{}", e.message);
    }
}
