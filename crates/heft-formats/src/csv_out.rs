//! CSV output of one node output: a header row, then one row per frame, written to any
//! [`Write`] a range of frames at a time.
//!
//! A writer is made from the plan alone ([`CsvWriter::new`]); its rows come from the values of
//! whatever frames the caller holds ([`CsvWriter::write_rows`]), so that the rows of a shot can
//! be appended window by window, in order, as the frames are evaluated.
//!
//! Numbers are written in the shortest form that reads back to the same bits (Ryu: Adams,
//! "Ryū: fast float-to-string conversion", PLDI 2018), as `ryu` writes them but for a trailing
//! `.0`, which is dropped (`2` rather than `2.0`); very large and very small magnitudes take an
//! exponent (`1e-7`, `1.5e16`), which every CSV reader reads as the same number.

use std::io::Write;
use std::ops::Range;

use heft_node_sdk::Timeline;
use heft_runtime::check::Plan;
use heft_runtime::eval::columns;

/// Rows are gathered into a buffer of about this size before each write to the destination.
const CHUNK: usize = 1 << 16;

/// Writes one output of a plan as CSV.
#[derive(Debug, Clone)]
pub struct CsvWriter {
    /// The header line, with its line end.
    header: Vec<u8>,
    /// Values per frame.
    width: usize,
    timeline: Timeline,
}

impl CsvWriter {
    /// The writer of output `output` of plan node `node`. Its columns carry the node's name
    /// and the output's (`braid.positions.p0.x [m]`), so that files merged by a data tool keep
    /// apart.
    pub fn new(plan: &Plan, node: usize, output: usize) -> Result<CsvWriter, String> {
        let pn = &plan.nodes[node];
        let port = &pn.ty.spec().outputs[output];
        let shape = pn.outputs[output];
        let mut header = vec!["frame".to_owned(), "time [s]".to_owned()];
        header.extend(columns(
            &format!("{}.{}", pn.name, port.name),
            shape,
            port.dimension,
            &port.codes,
        ));
        // The header through the csv crate, which quotes a name that needs it.
        let mut w = csv::Writer::from_writer(Vec::new());
        w.write_record(&header).map_err(|e| e.to_string())?;
        Ok(CsvWriter {
            header: w.into_inner().map_err(|e| e.to_string())?,
            width: shape.width(),
            timeline: plan.timeline,
        })
    }

    /// Values per frame (the columns after `frame` and `time [s]`).
    pub fn width(&self) -> usize {
        self.width
    }

    /// Writes the header row.
    pub fn write_header(&self, out: &mut impl Write) -> std::io::Result<()> {
        out.write_all(&self.header)
    }

    /// Writes the rows of the timeline's frames `frames` (indices into the timeline, in
    /// order), whose values are `values`: `width()` per frame, frame-major, the first frame of
    /// the range first.
    pub fn write_rows(&self, out: &mut impl Write, frames: Range<usize>, values: &[f64]) -> std::io::Result<()> {
        if values.len() != frames.len() * self.width {
            return Err(std::io::Error::other(format!(
                "{} values for {} frames of {} values",
                values.len(),
                frames.len(),
                self.width
            )));
        }
        let mut buf: Vec<u8> = Vec::with_capacity(CHUNK + 32 * (self.width + 2));
        let mut fmt = ryu::Buffer::new();
        let rows = values.chunks_exact(self.width.max(1));
        for (i, row) in frames.zip(rows) {
            write!(buf, "{},", self.timeline.frame_number(i))?;
            push_number(&mut buf, &mut fmt, self.timeline.time(i));
            for v in row {
                buf.push(b',');
                push_number(&mut buf, &mut fmt, *v);
            }
            buf.push(b'\n');
            if buf.len() >= CHUNK {
                out.write_all(&buf)?;
                buf.clear();
            }
        }
        out.write_all(&buf)
    }
}

/// Appends `v` in the shortest form that reads back to the same bits, without a trailing `.0`.
fn push_number(buf: &mut Vec<u8>, fmt: &mut ryu::Buffer, v: f64) {
    let s = fmt.format(v).as_bytes();
    let s = s.strip_suffix(b".0").unwrap_or(s);
    buf.extend_from_slice(s);
}

/// The text of one number as the CSV writer writes it.
pub fn number_text(v: f64) -> String {
    let mut buf = Vec::new();
    push_number(&mut buf, &mut ryu::Buffer::new(), v);
    String::from_utf8(buf).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every number reads back to its own bits, and the usual ones read as they always did.
    #[test]
    fn numbers_read_back_to_the_same_bits() {
        let cases = [
            (0.0, "0"),
            (-0.0, "-0"),
            (1.0, "1"),
            (-2.0, "-2"),
            (0.1, "0.1"),
            (568.7857, "568.7857"),
            (1.0 / 3.0, "0.3333333333333333"),
            (1e-20, "1e-20"),
            (1.5e16, "1.5e16"),
            (f64::MAX, "1.7976931348623157e308"),
            (f64::MIN_POSITIVE, "2.2250738585072014e-308"),
            (5e-324, "5e-324"),
        ];
        for (v, text) in cases {
            assert_eq!(number_text(v), text, "{v:e}");
        }
        // A spread of bit patterns over the whole range, both signs.
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        for _ in 0..100_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let v = f64::from_bits(x);
            if !v.is_finite() {
                continue;
            }
            let back: f64 = number_text(v).parse().expect("a number");
            assert_eq!(back.to_bits(), v.to_bits(), "{v:e} wrote {}", number_text(v));
        }
    }
}
