//! The host side of the boundary: opening a plugin library, checking its ABI, and calling
//! it with host-owned buffers. Libraries are leaked on purpose and never unloaded while the
//! process runs: unloading code that registered thread-local destructors is unsound.

use std::ffi::c_void;
use std::path::{Path, PathBuf};

use crate::abi::{
    ABI_MAJOR, ABI_MINOR, ByteSink, ByteView, Call, ENTRY_SYMBOL, EntryFn, PluginTable, SeriesView, SeriesViewMut,
    Status, TABLE_SIZE_1_0, TABLE_SIZE_1_2, Timeline, Window,
};
use crate::codec;
use crate::descriptor::{CheckProblem, ParamValue, PluginDescriptor, decode_descriptor};

/// Why a plugin could not be loaded. Every variant names the file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum LoadError {
    /// The file could not be opened as a shared library.
    Open {
        /// The file.
        path: PathBuf,
        /// The loader's message.
        reason: String,
    },
    /// The library has no entry symbol: it is not a heft plugin (or one of another major version).
    MissingEntry {
        /// The file.
        path: PathBuf,
    },
    /// The entry symbol returned a null table.
    NullTable {
        /// The file.
        path: PathBuf,
    },
    /// The plugin was built for another ABI, or its table is smaller than this host reads.
    AbiMismatch {
        /// The file.
        path: PathBuf,
        /// The plugin's major.minor and table size.
        plugin: (u32, u32, usize),
        /// This host's major.minor and table size.
        host: (u32, u32, usize),
    },
    /// The plugin could not describe itself.
    Describe {
        /// The file.
        path: PathBuf,
        /// What went wrong.
        reason: String,
    },
}

impl std::fmt::Display for LoadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LoadError::Open { path, reason } => {
                write!(f, "{}: cannot open as a plugin library: {reason}", path.display())
            }
            LoadError::MissingEntry { path } => write!(
                f,
                "{}: not a heft plugin: it has no `{ENTRY_SYMBOL}` symbol (built for another heft ABI, or not a plugin)",
                path.display()
            ),
            LoadError::NullTable { path } => {
                write!(f, "{}: the plugin entry returned no function table", path.display())
            }
            LoadError::AbiMismatch { path, plugin, host } => write!(
                f,
                "{}: plugin ABI {}.{} (table of {} bytes) does not match this heft's ABI {}.{} (table of {} bytes); rebuild the plugin against this heft",
                path.display(),
                plugin.0,
                plugin.1,
                plugin.2,
                host.0,
                host.1,
                host.2
            ),
            LoadError::Describe { path, reason } => {
                write!(f, "{}: the plugin could not describe itself: {reason}", path.display())
            }
        }
    }
}

impl std::error::Error for LoadError {}

/// A failed call into a plugin.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CallError {
    /// How it failed.
    pub status: Status,
    /// The node's (or the glue's) message.
    pub message: String,
}

impl std::fmt::Display for CallError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.status {
            Status::Panic => write!(f, "the node panicked: {}", self.message),
            Status::BadCall => write!(f, "malformed call: {}", self.message),
            _ => f.write_str(&self.message),
        }
    }
}

impl std::error::Error for CallError {}

/// A loaded plugin: its table and what it said about itself.
#[derive(Debug, Clone)]
pub struct Plugin {
    origin: PathBuf,
    table: Functions,
    descriptor: PluginDescriptor,
}

/// The functions of a plugin's table, copied out of it: those of ABI 1.0, and those appended
/// since when the plugin's table has them.
#[derive(Debug, Clone, Copy)]
struct Functions {
    describe: unsafe extern "C" fn(sink: ByteSink) -> i32,
    output_points: unsafe extern "C" fn(call: *const Call, points: *mut usize, count: usize) -> i32,
    evaluate: unsafe extern "C" fn(call: *const Call) -> i32,
    check: Option<unsafe extern "C" fn(call: *const Call, problems: ByteSink) -> i32>,
    windows: Option<(AdvanceFn, ReleaseFn)>,
}

type AdvanceFn = unsafe extern "C" fn(call: *const Call, window: Window, carry: *mut *mut c_void) -> i32;
type ReleaseFn = unsafe extern "C" fn(node_index: u32, carry: *mut c_void);

/// What a node evaluated in windows carries from one window to the next (ABI 1.3): the
/// plugin's own pointer, freed by the plugin's `release` when this value is dropped.
#[derive(Debug)]
pub struct Carry {
    ptr: *mut c_void,
    node_index: u32,
    release: Option<ReleaseFn>,
}

// SAFETY: the pointer is only handed back to the plugin that made it, by one thread at a time
// (`advance` takes `&mut Carry`); a plugin built with this SDK keeps a `Send` value behind it
// (`guest::Carry` holds only `Box<dyn Any + Send>`), and the ABI asks the same of any plugin.
unsafe impl Send for Carry {}

impl Carry {
    /// An empty carry for a node of type `node_index`, before its first window.
    pub fn new(node_index: u32) -> Carry {
        Carry {
            ptr: std::ptr::null_mut(),
            node_index,
            release: None,
        }
    }
}

impl Drop for Carry {
    fn drop(&mut self) {
        if let Some(release) = self.release
            && !self.ptr.is_null()
        {
            // SAFETY: `ptr` was stored by this plugin's `advance` for this node type and has
            // not been released (it is released only here, once).
            unsafe { release(self.node_index, self.ptr) };
            self.ptr = std::ptr::null_mut();
        }
    }
}

/// A table of ABI 1.0: the layout every later table starts with.
#[repr(C)]
pub(crate) struct Table10 {
    pub(crate) abi_major: u32,
    pub(crate) abi_minor: u32,
    pub(crate) table_size: usize,
    pub(crate) describe: unsafe extern "C" fn(sink: ByteSink) -> i32,
    pub(crate) output_points: unsafe extern "C" fn(call: *const Call, points: *mut usize, count: usize) -> i32,
    pub(crate) evaluate: unsafe extern "C" fn(call: *const Call) -> i32,
}

/// A table of ABI 1.1 and 1.2: 1.0's and `check`.
#[cfg(test)]
#[repr(C)]
pub(crate) struct Table12 {
    pub(crate) abi_major: u32,
    pub(crate) abi_minor: u32,
    pub(crate) table_size: usize,
    pub(crate) describe: unsafe extern "C" fn(sink: ByteSink) -> i32,
    pub(crate) output_points: unsafe extern "C" fn(call: *const Call, points: *mut usize, count: usize) -> i32,
    pub(crate) evaluate: unsafe extern "C" fn(call: *const Call) -> i32,
    pub(crate) check: unsafe extern "C" fn(call: *const Call, problems: ByteSink) -> i32,
}

/// The fields every table version starts with.
#[repr(C)]
struct TableHeader {
    abi_major: u32,
    abi_minor: u32,
    table_size: usize,
}

unsafe extern "C" fn append_bytes(ctx: *mut c_void, data: *const u8, len: usize) {
    if len == 0 || data.is_null() || ctx.is_null() {
        return;
    }
    // SAFETY: `ctx` is the `&mut Vec<u8>` this module put in the sink for the current call,
    // alive and not otherwise borrowed while the plugin runs; the plugin passes `len`
    // readable bytes at `data`.
    let (buf, bytes) = unsafe { (&mut *ctx.cast::<Vec<u8>>(), std::slice::from_raw_parts(data, len)) };
    buf.extend_from_slice(bytes);
}

unsafe extern "C" fn push_text(ctx: *mut c_void, data: *const u8, len: usize) {
    if data.is_null() || ctx.is_null() {
        return;
    }
    // SAFETY: as in `append_bytes`, with `ctx` a `&mut Vec<String>`.
    let (list, bytes) = unsafe { (&mut *ctx.cast::<Vec<String>>(), std::slice::from_raw_parts(data, len)) };
    list.push(String::from_utf8_lossy(bytes).into_owned());
}

/// Input views carrying widths only, for the calls that ask about shapes (no data).
fn width_views(widths: &[usize]) -> Vec<SeriesView> {
    widths
        .iter()
        .map(|&width| SeriesView {
            data: std::ptr::null(),
            len: 0,
            width,
        })
        .collect()
}

fn byte_sink(buf: &mut Vec<u8>) -> ByteSink {
    ByteSink {
        ctx: (buf as *mut Vec<u8>).cast(),
        write: append_bytes,
    }
}

fn text_sink(list: &mut Vec<String>) -> ByteSink {
    ByteSink {
        ctx: (list as *mut Vec<String>).cast(),
        write: push_text,
    }
}

impl Plugin {
    /// Opens a plugin library, checks its ABI and reads its descriptor.
    pub fn load(path: &Path) -> Result<Plugin, LoadError> {
        let path_buf = path.to_path_buf();
        if !path.is_file() {
            return Err(LoadError::Open {
                path: path_buf,
                reason: "no such file".to_owned(),
            });
        }
        // SAFETY: opening a library runs its initialisers. heft loads only files the user put
        // on its plugin path; the ABI check below rejects libraries that are not heft plugins
        // before any other function of theirs is called.
        let lib = unsafe { libloading::Library::new(path) }.map_err(|e| LoadError::Open {
            path: path_buf.clone(),
            reason: e.to_string(),
        })?;
        // Never unloaded: see the module docs.
        let lib: &'static libloading::Library = Box::leak(Box::new(lib));
        // SAFETY: the symbol is declared by the SDK with exactly the type `EntryFn`; a
        // library that exports the versioned name with another type is not a heft plugin
        // of this major version, which the header check below catches before any use.
        let entry: libloading::Symbol<'static, EntryFn> = unsafe { lib.get(ENTRY_SYMBOL.as_bytes()) }
            .map_err(|_| LoadError::MissingEntry { path: path_buf.clone() })?;
        // SAFETY: the entry function takes no arguments and returns a pointer to a static.
        let table = unsafe { entry() };
        // SAFETY: `table` comes from the library, which is never unloaded.
        unsafe { Plugin::from_raw(table, path_buf) }
    }

    /// Wraps a plugin linked into this program (see `export_plugin!`'s `plugin_table()`).
    pub fn from_static(table: &'static PluginTable, origin: &str) -> Result<Plugin, LoadError> {
        // SAFETY: a `&'static PluginTable` is valid for reads for the whole program.
        unsafe { Plugin::from_raw(table, PathBuf::from(origin)) }
    }

    /// # Safety
    /// `table` is null or points to a table that stays valid for the rest of the process.
    pub(crate) unsafe fn from_raw(table: *const PluginTable, path: PathBuf) -> Result<Plugin, LoadError> {
        if table.is_null() {
            return Err(LoadError::NullTable { path });
        }
        // SAFETY: every table version starts with the header fields; read them alone first.
        let header = unsafe { &*table.cast::<TableHeader>() };
        let ours = std::mem::size_of::<PluginTable>();
        if header.abi_major != ABI_MAJOR || header.table_size < TABLE_SIZE_1_0 {
            return Err(LoadError::AbiMismatch {
                path,
                plugin: (header.abi_major, header.abi_minor, header.table_size),
                host: (ABI_MAJOR, ABI_MINOR, ours),
            });
        }
        // SAFETY: same major version and a table at least as large as ABI 1.0's: its first
        // fields have the 1.0 layout (fields are only appended), and only those are read.
        let t10 = unsafe { &*table.cast::<Table10>() };
        let check = if header.table_size >= TABLE_SIZE_1_2 {
            // SAFETY: the table holds every field up to and including `check` (ABI 1.1 and
            // later), at the offsets `PluginTable` gives them (fields are only appended); only
            // that field is read, through the raw pointer.
            Some(unsafe { (&raw const (*table).check).read() })
        } else {
            None
        };
        let windows = if header.table_size >= ours {
            // SAFETY: the table is as large as this host's: every field of `PluginTable` is
            // there with the layout it expects.
            Some(unsafe { ((*table).advance, (*table).release) })
        } else {
            None
        };
        let table = Functions {
            describe: t10.describe,
            output_points: t10.output_points,
            evaluate: t10.evaluate,
            check,
            windows,
        };
        let mut bytes = Vec::new();
        // SAFETY: the sink's context is `bytes`, alive across the call.
        let code = unsafe { (table.describe)(byte_sink(&mut bytes)) };
        if Status::from_code(code) != Status::Ok {
            return Err(LoadError::Describe {
                path,
                reason: String::from_utf8_lossy(&bytes).into_owned(),
            });
        }
        let descriptor: PluginDescriptor = decode_descriptor(&bytes).map_err(|raw| LoadError::Describe {
            path: path.clone(),
            reason: format!(
                "its description of itself cannot be read by this heft (its SDK and this heft's differ): rebuild it \
                 against this heft's heft-node-sdk ({raw})"
            ),
        })?;
        Ok(Plugin {
            origin: path,
            table,
            descriptor,
        })
    }

    /// The library file (or the static origin label).
    pub fn origin(&self) -> &Path {
        &self.origin
    }

    /// What the plugin said about itself.
    pub fn descriptor(&self) -> &PluginDescriptor {
        &self.descriptor
    }

    /// Encodes parameter values for [`Plugin::evaluate`].
    pub fn encode_params(values: &[ParamValue]) -> Result<Vec<u8>, String> {
        codec::encode(&values.to_vec())
    }

    fn call(node_index: u32, params: &[u8], timeline: Timeline) -> Call {
        Call {
            struct_size: std::mem::size_of::<Call>(),
            node_index,
            params: ByteView {
                data: params.as_ptr(),
                len: params.len(),
            },
            timeline,
            inputs: std::ptr::null(),
            input_count: 0,
            outputs: std::ptr::null(),
            output_count: 0,
            message: ByteSink {
                ctx: std::ptr::null_mut(),
                write: append_bytes,
            },
            warning: ByteSink {
                ctx: std::ptr::null_mut(),
                write: push_text,
            },
            summaries: std::ptr::null_mut(),
            summary_count: 0,
            threads: 1,
        }
    }

    /// Asks the node type for the problems it finds with these parameters, input widths and
    /// timeline (`Node::check`); none from a plugin built before the hook existed (ABI 1.0).
    pub fn check(
        &self,
        node_index: u32,
        params: &[u8],
        timeline: Timeline,
        input_widths: &[usize],
    ) -> Result<Vec<CheckProblem>, CallError> {
        let Some(check) = self.table.check else {
            return Ok(Vec::new());
        };
        let views = width_views(input_widths);
        let mut message = Vec::new();
        let mut found = Vec::new();
        let mut call = Plugin::call(node_index, params, timeline);
        call.inputs = views.as_ptr();
        call.input_count = views.len();
        call.message = byte_sink(&mut message);
        // SAFETY: `call` and everything it points to (params, views, the message buffer) and
        // the problems buffer outlive the call.
        let code = unsafe { check(&call, byte_sink(&mut found)) };
        match Status::from_code(code) {
            Status::Ok => codec::decode(&found).map_err(|e| CallError {
                status: Status::BadCall,
                message: format!("the node's check answer cannot be read: {e}"),
            }),
            status => Err(CallError {
                status,
                message: String::from_utf8_lossy(&message).into_owned(),
            }),
        }
    }

    /// Asks the node type for the point count of each of its `output_count` outputs.
    pub fn output_points(
        &self,
        node_index: u32,
        params: &[u8],
        timeline: Timeline,
        input_widths: &[usize],
        output_count: usize,
    ) -> Result<Vec<usize>, CallError> {
        let views = width_views(input_widths);
        let mut message = Vec::new();
        let mut call = Plugin::call(node_index, params, timeline);
        call.inputs = views.as_ptr();
        call.input_count = views.len();
        call.message = byte_sink(&mut message);
        let mut points = vec![0usize; output_count];
        // SAFETY: `call` and everything it points to (params, views, message buffer) and
        // `points` (room for `output_count` values) outlive the call.
        let code = unsafe { (self.table.output_points)(&call, points.as_mut_ptr(), output_count) };
        match Status::from_code(code) {
            Status::Ok => Ok(points),
            status => Err(CallError {
                status,
                message: String::from_utf8_lossy(&message).into_owned(),
            }),
        }
    }

    /// Evaluates a node over `timeline` on one thread. Inputs are (values, width); outputs are
    /// host-allocated buffers of frames times width; `summaries` has room for the node
    /// type's summary values (left NaN where the node reports none). Returns the warnings.
    pub fn evaluate(
        &self,
        node_index: u32,
        params: &[u8],
        timeline: Timeline,
        inputs: &[(&[f64], usize)],
        outputs: &mut [(&mut [f64], usize)],
        summaries: &mut [f64],
    ) -> Result<Vec<String>, CallError> {
        self.evaluate_with_threads(node_index, params, timeline, inputs, outputs, summaries, 1)
    }

    /// [`Plugin::evaluate`], letting the node use up to `threads` threads (`Call::threads`, ABI
    /// 1.2; 0 is taken as 1). A plugin built before 1.2 does not see it and uses one.
    #[allow(clippy::too_many_arguments)]
    pub fn evaluate_with_threads(
        &self,
        node_index: u32,
        params: &[u8],
        timeline: Timeline,
        inputs: &[(&[f64], usize)],
        outputs: &mut [(&mut [f64], usize)],
        summaries: &mut [f64],
        threads: usize,
    ) -> Result<Vec<String>, CallError> {
        let evaluate = self.table.evaluate;
        // SAFETY: `call` is built by `with_call` for this call alone (see there).
        Plugin::with_call(
            node_index,
            params,
            timeline,
            inputs,
            outputs,
            summaries,
            threads,
            |call| unsafe { evaluate(call) },
        )
    }

    /// Builds the call of a node over these buffers, runs `f` on it (the plugin function to
    /// call), and reads its status, message and warnings. Every pointer in the call refers to
    /// data borrowed for this function: inputs shared, outputs and summaries exclusively (`&mut`),
    /// distinct slices; the sinks' buffers live here.
    #[allow(clippy::too_many_arguments)]
    fn with_call(
        node_index: u32,
        params: &[u8],
        timeline: Timeline,
        inputs: &[(&[f64], usize)],
        outputs: &mut [(&mut [f64], usize)],
        summaries: &mut [f64],
        threads: usize,
        f: impl FnOnce(&Call) -> i32,
    ) -> Result<Vec<String>, CallError> {
        let in_views: Vec<SeriesView> = inputs
            .iter()
            .map(|(data, width)| SeriesView {
                data: data.as_ptr(),
                len: data.len(),
                width: *width,
            })
            .collect();
        let out_views: Vec<SeriesViewMut> = outputs
            .iter_mut()
            .map(|(data, width)| SeriesViewMut {
                data: data.as_mut_ptr(),
                len: data.len(),
                width: *width,
            })
            .collect();
        let mut message = Vec::new();
        let mut warnings = Vec::new();
        let mut call = Plugin::call(node_index, params, timeline);
        call.inputs = in_views.as_ptr();
        call.input_count = in_views.len();
        call.outputs = out_views.as_ptr();
        call.output_count = out_views.len();
        call.message = byte_sink(&mut message);
        call.warning = text_sink(&mut warnings);
        call.summaries = summaries.as_mut_ptr();
        call.summary_count = summaries.len();
        call.threads = threads.max(1);
        let code = f(&call);
        match Status::from_code(code) {
            Status::Ok => Ok(warnings),
            status => Err(CallError {
                status,
                message: String::from_utf8_lossy(&message).into_owned(),
            }),
        }
    }

    /// Whether node type `node_index` can be evaluated in windows of frames
    /// ([`Plugin::advance`]): the plugin has ABI 1.3's functions and its descriptor says so.
    pub fn windowed(&self, node_index: u32) -> bool {
        self.table.windows.is_some() && self.descriptor.windowed.contains(&node_index)
    }

    /// Evaluates the frames of `window` of a node type that runs in windows: `inputs` hold the
    /// whole timeline, `outputs` `window.count` frames; `carry` is what the node carried from
    /// the window before ([`Carry::new`] for the first). Windows must come in order from frame
    /// 0; the summaries are the node's after the last window. Returns the warnings.
    #[allow(clippy::too_many_arguments)]
    pub fn advance(
        &self,
        node_index: u32,
        params: &[u8],
        timeline: Timeline,
        window: Window,
        inputs: &[(&[f64], usize)],
        outputs: &mut [(&mut [f64], usize)],
        summaries: &mut [f64],
        threads: usize,
        carry: &mut Carry,
    ) -> Result<Vec<String>, CallError> {
        let refuse = |message: String| CallError {
            status: Status::BadCall,
            message,
        };
        let Some((advance, release)) = self.table.windows.filter(|_| self.windowed(node_index)) else {
            return Err(refuse(format!(
                "node type {node_index} does not run in windows of frames"
            )));
        };
        if carry.node_index != node_index {
            return Err(refuse("a carry of another node type".to_owned()));
        }
        let fits = window
            .first
            .checked_add(window.count)
            .is_some_and(|end| end <= timeline.frame_count);
        let sized = outputs.iter().all(|(data, width)| {
            usize::try_from(window.count).ok().and_then(|c| c.checked_mul(*width)) == Some(data.len())
        });
        if !fits || !sized {
            return Err(refuse(
                "a window outside the timeline, or outputs not sized to it".to_owned(),
            ));
        }
        carry.release = Some(release);
        let slot = &raw mut carry.ptr;
        // SAFETY: `call` is built by `with_call` for this call alone (see there); `slot` holds
        // null or the pointer this plugin stored for this node type at the window before, and
        // is exclusively ours for the call.
        Plugin::with_call(
            node_index,
            params,
            timeline,
            inputs,
            outputs,
            summaries,
            threads,
            |call| unsafe { advance(call, window, slot) },
        )
    }
}
