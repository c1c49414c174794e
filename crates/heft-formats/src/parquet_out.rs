//! Apache Parquet output of one node output (`write node.port format parquet`), written by the
//! `parquet` crate's column writer, a window of frames at a time.
//!
//! The table is long ("tidy": one observation per row), the shape pandas, polars, DuckDB and
//! Spark users group, filter and join on, and one that stays a table at any strand count
//! where a CSV row would need tens of thousands of columns:
//!
//! | output | rows | columns |
//! |---|---|---|
//! | points of a strand node | one per frame and particle | `frame`, `time [s]`, `strand`, `joint`, `<node>.<port>.x [m]`, `.y`, `.z` |
//! | other points | one per frame and point | `frame`, `time [s]`, `point`, `<node>.<port>.x [m]`, `.y`, `.z` |
//! | vec3, transform, scalar, flag | one per frame | `frame`, `time [s]`, then the CSV's value columns |
//!
//! `frame`, `strand`, `joint` and `point` are INT64, everything else DOUBLE (f64, as evaluated);
//! every column is REQUIRED. Value columns carry the node, the output and the unit in their
//! names, as the CSV's do. The file's key-value metadata holds `heft` (JSON: the node, the
//! output, its kind, each column's unit, the frame rate, the first frame and the frame count,
//! and the joints per strand). Rows are in frame order, then point order.
//!
//! A writer is made from the plan alone ([`ParquetWriter::new`]); [`ParquetFile::write_frames`]
//! appends the rows of any range of frames, in order, as row groups of about a million rows,
//! so that a shot can be written window by window as it is evaluated.

use std::io::Write;
use std::ops::Range;
use std::sync::Arc;

use heft_node_sdk::{PortKind, Timeline};
use heft_runtime::check::{Plan, PlannedWrite};
use heft_runtime::eval::columns;
use parquet::basic::{Repetition, Type as Physical};
use parquet::column::writer::ColumnWriter;
use parquet::file::metadata::KeyValue;
use parquet::file::properties::{WriterProperties, WriterVersion};
use parquet::file::writer::SerializedFileWriter;
use parquet::schema::types::{ColumnPath, Type};
use serde_json::json;

/// Rows per row group, about: large enough for fast scans, small enough to hold one group's
/// column in memory while it is written.
const ROWS_PER_GROUP: usize = 1 << 20;

/// What a column holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Column {
    Frame,
    Time,
    Point,
    Strand,
    Joint,
    /// Value `k` of a row: of the point's three coordinates for points, of the frame's values
    /// otherwise.
    Value(usize),
}

/// Writes one output of a plan as a Parquet file.
#[derive(Debug, Clone)]
pub struct ParquetWriter {
    names: Vec<String>,
    columns: Vec<Column>,
    /// Rows per frame (the points of a points output, else 1).
    rows: usize,
    /// Values per frame.
    width: usize,
    /// Values per row.
    step: usize,
    /// Joints per strand, for the points of a strand node.
    chain: Option<usize>,
    timeline: Timeline,
    schema: Arc<Type>,
    properties: Arc<WriterProperties>,
}

/// A Parquet file being written (see [`ParquetWriter::start`]).
pub struct ParquetFile<W: Write + Send> {
    writer: ParquetWriter,
    file: SerializedFileWriter<W>,
    /// The next frame expected: windows come in order, without gaps.
    next: Option<usize>,
}

impl<W: Write + Send> std::fmt::Debug for ParquetFile<W> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("ParquetFile")
            .field("next", &self.next)
            .finish_non_exhaustive()
    }
}

fn perr(e: impl std::fmt::Display) -> String {
    format!("cannot write the Parquet file: {e}")
}

impl ParquetWriter {
    /// The writer of a planned write.
    pub fn new(plan: &Plan, write: &PlannedWrite) -> Result<ParquetWriter, String> {
        let pn = &plan.nodes[write.node];
        let port = &pn.ty.spec().outputs[write.output];
        let shape = pn.outputs[write.output];
        let series = format!("{}.{}", pn.name, port.name);
        let mut names = vec!["frame".to_owned(), "time [s]".to_owned()];
        let mut cols = vec![Column::Frame, Column::Time];
        let (rows, chain, values) = match shape.kind {
            PortKind::Points => {
                let chain = write.chain.filter(|c| *c >= 1 && shape.points.is_multiple_of(*c));
                match chain {
                    Some(_) => {
                        names.extend(["strand".to_owned(), "joint".to_owned()]);
                        cols.extend([Column::Strand, Column::Joint]);
                    }
                    None => {
                        names.push("point".to_owned());
                        cols.push(Column::Point);
                    }
                }
                // One point's columns: those of a vec3 of the same series and unit.
                let one = heft_node_sdk::Shape::of(PortKind::Vec3);
                (shape.points, chain, columns(&series, one, port.dimension, &port.codes))
            }
            _ => (1, None, columns(&series, shape, port.dimension, &port.codes)),
        };
        // Each value column's unit: the output's, but none for a quaternion's components, an
        // on/off flag or a code.
        let unit = port.dimension.si_symbol();
        let units: Vec<(String, &str)> = values
            .iter()
            .enumerate()
            .map(|(k, n)| {
                let u = match shape.kind {
                    PortKind::Transform if k >= 3 => "",
                    PortKind::Flag => "",
                    _ => unit,
                };
                (n.clone(), u)
            })
            .collect();
        cols.extend((0..values.len()).map(Column::Value));
        names.extend(values);
        let mut fields = Vec::with_capacity(names.len());
        for (name, col) in names.iter().zip(&cols) {
            let physical = match col {
                Column::Frame | Column::Point | Column::Strand | Column::Joint => Physical::INT64,
                Column::Time | Column::Value(_) => Physical::DOUBLE,
            };
            let field = Type::primitive_type_builder(name, physical)
                .with_repetition(Repetition::REQUIRED)
                .build()
                .map_err(perr)?;
            fields.push(Arc::new(field));
        }
        let schema = Type::group_type_builder("heft")
            .with_fields(fields)
            .build()
            .map_err(perr)?;
        let tl = plan.timeline;
        let mut unit_map = serde_json::Map::new();
        unit_map.insert("frame".to_owned(), json!(""));
        unit_map.insert("time [s]".to_owned(), json!("s"));
        for index in &names[2..] {
            unit_map.insert(index.clone(), json!(""));
        }
        for (n, u) in &units {
            unit_map.insert(n.clone(), json!(u));
        }
        let meta = json!({
            "node": pn.name,
            "output": port.name,
            "series": series,
            "kind": shape.to_string(),
            "units": unit_map,
            "joints_per_strand": chain,
            "frame_rate": format!("{}/{}", tl.rate_num, tl.rate_den),
            "fps": tl.fps(),
            "first_frame": tl.start_frame,
            "frame_count": tl.frame_count,
            "rows": if rows == 1 { "one per frame" } else { "one per frame and point, in frame order then point order" },
        });
        // Values rarely repeat: plain encoding, no dictionary tried and dropped page by page.
        let mut props = WriterProperties::builder()
            .set_writer_version(WriterVersion::PARQUET_1_0)
            .set_created_by(concat!("heft ", env!("CARGO_PKG_VERSION")).to_owned())
            .set_max_row_group_row_count(None)
            .set_key_value_metadata(Some(vec![KeyValue::new("heft".to_owned(), meta.to_string())]));
        for (name, col) in names.iter().zip(&cols) {
            if matches!(col, Column::Value(_)) {
                props = props.set_column_dictionary_enabled(ColumnPath::new(vec![name.clone()]), false);
            }
        }
        Ok(ParquetWriter {
            names,
            columns: cols,
            rows,
            width: shape.width(),
            step: (shape.width() / rows.max(1)).max(1),
            chain,
            timeline: tl,
            schema: Arc::new(schema),
            properties: Arc::new(props.build()),
        })
    }

    /// The columns, in order.
    pub fn column_names(&self) -> &[String] {
        &self.names
    }

    /// Values per frame.
    pub fn width(&self) -> usize {
        self.width
    }

    /// Starts a file on `out` (the magic bytes are written at once).
    pub fn start<W: Write + Send>(&self, out: W) -> Result<ParquetFile<W>, String> {
        let file = SerializedFileWriter::new(out, self.schema.clone(), self.properties.clone()).map_err(perr)?;
        Ok(ParquetFile {
            writer: self.clone(),
            file,
            next: None,
        })
    }
}

impl<W: Write + Send> ParquetFile<W> {
    /// Appends the rows of the timeline's frames `frames` (in order after the frames written
    /// before), whose values are `values`: the output's values per frame, frame-major, the
    /// first frame of the range first.
    pub fn write_frames(&mut self, frames: Range<usize>, values: &[f64]) -> Result<(), String> {
        let w = &self.writer;
        if values.len() != frames.len() * w.width {
            return Err(format!(
                "{} values for {} frames of {} values",
                values.len(),
                frames.len(),
                w.width
            ));
        }
        if let Some(next) = self.next
            && frames.start != next
        {
            return Err(format!("frames from {} follow frames up to {next}", frames.start));
        }
        self.next = Some(frames.end);
        let per_group = (ROWS_PER_GROUP / w.rows.max(1)).max(1);
        let mut a = frames.start;
        let mut doubles: Vec<f64> = Vec::new();
        let mut ints: Vec<i64> = Vec::new();
        while a < frames.end {
            let b = (a + per_group).min(frames.end);
            let offset = (a - frames.start) * w.width;
            let group = &values[offset..offset + (b - a) * w.width];
            let mut rg = self.file.next_row_group().map_err(perr)?;
            let mut k = 0;
            while let Some(mut col) = rg.next_column().map_err(perr)? {
                let column = *w.columns.get(k).ok_or_else(|| perr("more columns than planned"))?;
                k += 1;
                match col.untyped() {
                    ColumnWriter::Int64ColumnWriter(c) => {
                        ints.clear();
                        w.fill_ints(column, a..b, &mut ints);
                        c.write_batch(&ints, None, None).map_err(perr)?;
                    }
                    ColumnWriter::DoubleColumnWriter(c) => {
                        doubles.clear();
                        w.fill_doubles(column, a..b, group, &mut doubles);
                        c.write_batch(&doubles, None, None).map_err(perr)?;
                    }
                    _ => return Err(perr("a column of a type heft does not write")),
                }
                col.close().map_err(perr)?;
            }
            rg.close().map_err(perr)?;
            a = b;
        }
        Ok(())
    }

    /// Writes the footer; returns the destination.
    pub fn finish(self) -> Result<W, String> {
        self.file.into_inner().map_err(perr)
    }
}

impl ParquetWriter {
    /// The integer column `column` of frames `frames`.
    fn fill_ints(&self, column: Column, frames: Range<usize>, out: &mut Vec<i64>) {
        let rows = self.rows;
        out.reserve(frames.len() * rows);
        let c = self.chain.unwrap_or(1).max(1) as i64;
        for i in frames {
            match column {
                Column::Frame => out.extend(std::iter::repeat_n(self.timeline.frame_number(i), rows)),
                Column::Point => out.extend(0..rows as i64),
                Column::Strand => out.extend((0..rows as i64).map(|p| p / c)),
                Column::Joint => out.extend((0..rows as i64).map(|p| p % c)),
                Column::Time | Column::Value(_) => {}
            }
        }
    }

    /// The f64 column `column` of frames `frames`, whose values are `values`.
    fn fill_doubles(&self, column: Column, frames: Range<usize>, values: &[f64], out: &mut Vec<f64>) {
        let rows = self.rows;
        out.reserve(frames.len() * rows);
        match column {
            Column::Time => {
                for i in frames {
                    out.extend(std::iter::repeat_n(self.timeline.time(i), rows));
                }
            }
            // Value k of every row: rows are `step` values apart (a point's three coordinates,
            // or a frame's values).
            Column::Value(k) => out.extend(values.iter().skip(k).step_by(self.step)),
            _ => {}
        }
    }
}
