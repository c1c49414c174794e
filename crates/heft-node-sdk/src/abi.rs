//! The C-compatible plugin boundary. Only `#[repr(C)]` types and `extern "C"` function
//! pointers live here; the rules:
//!
//! - A plugin exports one symbol, [`ENTRY_SYMBOL`], an `extern "C" fn() -> *const PluginTable`.
//! - [`PluginTable`] starts with the ABI major and minor version and its own size in bytes,
//!   and only ever grows by appending fields. A host accepts a plugin of the same major
//!   version whose table is at least as large as the fields the host reads.
//! - The host owns every buffer. A plugin writes outputs into host-allocated slices and
//!   hands text and descriptors back through a [`ByteSink`] callback the host provides,
//!   so no memory is ever freed by the other side's allocator.
//! - A call returns a [`Status`] code; a panic is caught inside the plugin and reported as
//!   [`Status::Panic`] with its message.

use std::ffi::c_void;

/// Incremented on any change that is not a pure append.
pub const ABI_MAJOR: u32 = 1;
/// Incremented when fields are appended to [`PluginTable`] or [`Call`]. 1: `check`. 2:
/// [`Call::threads`]. 3: `advance` and `release` (evaluation in windows of frames).
pub const ABI_MINOR: u32 = 3;
/// The one symbol a plugin exports (the major version is part of the name).
pub const ENTRY_SYMBOL: &str = "heft_plugin_entry_v1";

/// The type of the entry symbol.
pub type EntryFn = unsafe extern "C" fn() -> *const PluginTable;

/// Result of a call across the boundary.
#[repr(i32)]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// Success.
    Ok = 0,
    /// The node returned an error; the message was written to the call's message sink.
    NodeError = 1,
    /// The node panicked; the panic message was written to the message sink.
    Panic = 2,
    /// The call itself was malformed (unknown node index, undecodable parameters, wrong buffer sizes).
    BadCall = 3,
}

impl Status {
    /// Reads a status code; unknown codes are treated as a malformed call.
    pub fn from_code(code: i32) -> Status {
        match code {
            0 => Status::Ok,
            1 => Status::NodeError,
            2 => Status::Panic,
            _ => Status::BadCall,
        }
    }
}

/// A host callback that receives bytes; the plugin may call `write` several times and
/// the host appends. The host copies the bytes before returning.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct ByteSink {
    /// Opaque host context.
    pub ctx: *mut c_void,
    /// Appends `len` bytes at `data` to the host's buffer.
    pub write: unsafe extern "C" fn(ctx: *mut c_void, data: *const u8, len: usize),
}

/// Borrowed bytes owned by the caller.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct ByteView {
    /// Start of the bytes (may dangle when `len` is 0).
    pub data: *const u8,
    /// Number of bytes.
    pub len: usize,
}

/// The frames a call evaluates: frame `start_frame + i` for `i` in `0..frame_count`,
/// at `rate_num / rate_den` frames per second. Frame `f` is at time `f * rate_den / rate_num` s.
#[repr(C)]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Timeline {
    /// The first frame number.
    pub start_frame: i64,
    /// How many frames.
    pub frame_count: u64,
    /// Frame rate numerator (frames).
    pub rate_num: u32,
    /// Frame rate denominator (seconds); 24000/1001 is NTSC film rate.
    pub rate_den: u32,
}

impl Timeline {
    /// Frame rate in frames per second.
    pub fn fps(&self) -> f64 {
        f64::from(self.rate_num) / f64::from(self.rate_den)
    }
    /// Seconds between frames.
    pub fn dt(&self) -> f64 {
        f64::from(self.rate_den) / f64::from(self.rate_num)
    }
    /// Frame count as usize.
    pub fn frames(&self) -> usize {
        usize::try_from(self.frame_count).unwrap_or(usize::MAX)
    }
    /// The frame number of the `i`-th frame of the call.
    pub fn frame_number(&self, i: usize) -> i64 {
        self.start_frame + i as i64
    }
    /// Time in seconds of the `i`-th frame of the call (frame numbers times the frame duration).
    pub fn time(&self, i: usize) -> f64 {
        (self.start_frame + i as i64) as f64 * f64::from(self.rate_den) / f64::from(self.rate_num)
    }
}

/// A read-only series: `len` values, `width` per frame, frame-major.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct SeriesView {
    /// Start of the values (may dangle when `len` is 0).
    pub data: *const f64,
    /// Number of values (frames times width).
    pub len: usize,
    /// Values per frame.
    pub width: usize,
}

/// A writable series allocated by the host.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct SeriesViewMut {
    /// Start of the values (may dangle when `len` is 0).
    pub data: *mut f64,
    /// Number of values (frames times width).
    pub len: usize,
    /// Values per frame.
    pub width: usize,
}

/// One call of a node: which node type, its parameters and its data.
#[repr(C)]
#[derive(Debug, Clone, Copy)]
pub struct Call {
    /// `size_of::<Call>()` as the host built it; a plugin reads only fields inside it.
    pub struct_size: usize,
    /// Index of the node type in the plugin's descriptor.
    pub node_index: u32,
    /// Parameters, encoded by [`crate::codec`] as a `Vec<ParamValue>` in descriptor order.
    pub params: ByteView,
    /// The frames.
    pub timeline: Timeline,
    /// Input series, one per declared input; for a shape query only `width` is set.
    pub inputs: *const SeriesView,
    /// Number of inputs.
    pub input_count: usize,
    /// Output series, one per declared output; empty for a shape query.
    pub outputs: *const SeriesViewMut,
    /// Number of outputs.
    pub output_count: usize,
    /// Receives an error message when the call fails.
    pub message: ByteSink,
    /// Receives warnings (UTF-8, one per write) while the call succeeds.
    pub warning: ByteSink,
    /// Room for the node type's summary values, in descriptor order, set to NaN by the host.
    pub summaries: *mut f64,
    /// Number of summary values.
    pub summary_count: usize,
    /// ABI 1.2: how many threads the node may use for this call, at least 1 (the host's share
    /// of its threads for the node). A plugin reads it only when `struct_size` covers it
    /// ([`CALL_SIZE_1_1`] is the size without it) and takes 1 otherwise; it reads 0 as 1.
    pub threads: usize,
}

/// The size of a [`Call`] of ABI 1.1, before `threads` was appended: a call of this size comes
/// from a host that gives every node one thread.
pub const CALL_SIZE_1_1: usize = std::mem::offset_of!(Call, threads);

/// The frames of the timeline whose outputs one `advance` call computes: timeline frames
/// `first .. first + count` (indices into the call's timeline, not frame numbers).
#[repr(C)]
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Window {
    /// Index of the window's first frame in the timeline.
    pub first: u64,
    /// How many frames.
    pub count: u64,
}

/// The function table a plugin exports. Fields are only ever appended.
#[repr(C)]
#[derive(Debug)]
pub struct PluginTable {
    /// Must equal the host's [`ABI_MAJOR`].
    pub abi_major: u32,
    /// The plugin's [`ABI_MINOR`]; a host reads only fields that exist at this minor.
    pub abi_minor: u32,
    /// `size_of::<PluginTable>()` in the plugin.
    pub table_size: usize,
    /// Writes the encoded [`crate::descriptor::PluginDescriptor`] to the sink.
    pub describe: unsafe extern "C" fn(sink: ByteSink) -> i32,
    /// For the call's node type, parameters and input widths, writes the point count N of
    /// every output (0 for non-points outputs) into `points[..count]`.
    pub output_points: unsafe extern "C" fn(call: *const Call, points: *mut usize, count: usize) -> i32,
    /// Evaluates the call, writing every output buffer.
    pub evaluate: unsafe extern "C" fn(call: *const Call) -> i32,
    /// ABI 1.1: for the call's node type, parameters, input widths and timeline, writes the
    /// problems it finds (an encoded `Vec<descriptor::CheckProblem>`) to the sink, so that
    /// `heft check` reports them at the graph's lines. A host reads it only from a table that
    /// is large enough ([`TABLE_SIZE_1_0`] is the size without it).
    pub check: unsafe extern "C" fn(call: *const Call, problems: ByteSink) -> i32,
    /// ABI 1.3: evaluates the frames of `window` only, for a node type the descriptor says runs
    /// in windows. The call's inputs hold the whole timeline; its outputs hold `window.count`
    /// frames. `carry` points to the host's slot for what the node carries from one window to
    /// the next: null before the first window (the plugin stores its own pointer there), the
    /// plugin's pointer after. Windows come in order, from frame 0, without gaps, and every
    /// call of one carry has the same node type, parameters, timeline and inputs. Summaries are
    /// read after the last window. A host reads it only from a table large enough
    /// ([`TABLE_SIZE_1_2`] is the size without it).
    pub advance: unsafe extern "C" fn(call: *const Call, window: Window, carry: *mut *mut c_void) -> i32,
    /// ABI 1.3: frees a carry `advance` stored (the host calls it once per carry, after the
    /// last window or when the evaluation stops early); `node_index` is the carry's node type.
    pub release: unsafe extern "C" fn(node_index: u32, carry: *mut c_void),
}

/// The size of a table of ABI 1.0, before `check` was appended: the least a host accepts.
pub const TABLE_SIZE_1_0: usize = 8 + 4 * std::mem::size_of::<usize>();

/// The size of a table of ABI 1.2, before `advance` and `release` were appended.
pub const TABLE_SIZE_1_2: usize = TABLE_SIZE_1_0 + std::mem::size_of::<usize>();

#[cfg(test)]
mod tests {
    use std::mem::{offset_of, size_of};

    use super::*;

    /// The table's header is frozen: a host reads these three fields from any plugin of any
    /// version before it trusts anything else, so their offsets must never move.
    #[test]
    fn the_table_header_layout_is_frozen() {
        assert_eq!(offset_of!(PluginTable, abi_major), 0);
        assert_eq!(offset_of!(PluginTable, abi_minor), 4);
        assert_eq!(offset_of!(PluginTable, table_size), 8);
        assert_eq!(offset_of!(PluginTable, describe), 8 + size_of::<usize>());
        assert_eq!(offset_of!(PluginTable, check), TABLE_SIZE_1_0);
        assert_eq!(offset_of!(PluginTable, advance), TABLE_SIZE_1_2);
        assert_eq!(offset_of!(PluginTable, release), TABLE_SIZE_1_2 + size_of::<usize>());
        assert_eq!(size_of::<PluginTable>(), 8 + 7 * size_of::<usize>());
        assert_eq!(size_of::<Window>(), 16);
    }

    /// The call's fields never move: a plugin reads the fields of the version it was built for
    /// from a host's larger call, and a host's older, smaller call holds exactly the fields
    /// before `threads` (ABI 1.1's call).
    #[test]
    fn the_call_layout_is_frozen() {
        let w = size_of::<usize>();
        assert_eq!(offset_of!(Call, struct_size), 0);
        assert_eq!(offset_of!(Call, node_index), w);
        assert_eq!(offset_of!(Call, params), 2 * w);
        assert_eq!(offset_of!(Call, timeline), 4 * w);
        assert_eq!(offset_of!(Call, inputs), 4 * w + 24);
        assert_eq!(offset_of!(Call, message), 8 * w + 24);
        assert_eq!(offset_of!(Call, summary_count), 13 * w + 24);
        assert_eq!(CALL_SIZE_1_1, 14 * w + 24);
        assert_eq!(offset_of!(Call, threads), CALL_SIZE_1_1);
        assert_eq!(size_of::<Call>(), CALL_SIZE_1_1 + w);
    }

    /// Status codes are part of the ABI.
    #[test]
    fn status_codes_are_stable() {
        assert_eq!(Status::Ok as i32, 0);
        assert_eq!(Status::NodeError as i32, 1);
        assert_eq!(Status::Panic as i32, 2);
        assert_eq!(Status::BadCall as i32, 3);
        assert_eq!(Status::from_code(17), Status::BadCall);
    }

    #[test]
    fn timeline_times_for_a_fractional_rate() {
        // NTSC film rate 24000/1001 (SMPTE ST 12-1): frame 24000 is at exactly 1001 s.
        let t = Timeline {
            start_frame: 23_999,
            frame_count: 2,
            rate_num: 24_000,
            rate_den: 1001,
        };
        assert_eq!(t.time(1), 1001.0);
        assert_eq!(t.frame_number(1), 24_000);
        assert!((t.fps() - 23.976_023_976_023_978).abs() < 1e-12);
    }
}
