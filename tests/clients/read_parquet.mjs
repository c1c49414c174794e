// Reads a Parquet file with hyparquet (npm `hyparquet`, a JavaScript reader written apart from
// the Rust `parquet` crate heft writes with) and prints, as one JSON object on stdout:
//
//   {"rows": N, "created_by": "...", "metadata": {key: value, ...},
//    "schema": [{"name": ..., "type": "INT64" | "DOUBLE" | ..., "repetition": ...}, ...],
//    "columns": {name: [value, ...], ...}}
//
// Every DOUBLE is printed as the 16 hexadecimal digits of its IEEE 754 bits (so the caller
// compares bits, not decimal text), every INT64 as its decimal digits, in row order.
//
//   node read_parquet.mjs FILE

import { asyncBufferFromFile, parquetMetadataAsync, parquetRead } from 'hyparquet';

const file = process.argv[2];
if (!file) {
  console.error('usage: node read_parquet.mjs FILE.parquet');
  process.exit(2);
}

const buffer = await asyncBufferFromFile(file);
const metadata = await parquetMetadataAsync(buffer);
const rows = Number(metadata.num_rows);
// The schema is a flat list whose first element is the root group.
const schema = metadata.schema.slice(1).map((s) => ({
  name: s.name,
  type: s.type,
  repetition: s.repetition_type,
}));

const bits = new DataView(new ArrayBuffer(8));
function text(v) {
  if (typeof v === 'bigint') return v.toString();
  if (typeof v === 'number') {
    bits.setFloat64(0, v, true);
    return bits.getBigUint64(0, true).toString(16).padStart(16, '0');
  }
  throw new Error(`a value of type ${typeof v}: ${v}`);
}

const columns = Object.fromEntries(schema.map((s) => [s.name, new Array(rows)]));
await parquetRead({
  file: buffer,
  metadata,
  onChunk({ columnName, columnData, rowStart }) {
    const out = columns[columnName];
    for (let i = 0; i < columnData.length; i++) out[rowStart + i] = text(columnData[i]);
  },
});
for (const [name, values] of Object.entries(columns)) {
  const missing = values.findIndex((v) => v === undefined);
  if (missing >= 0) throw new Error(`column ${name}: row ${missing} was not read`);
}

const kv = Object.fromEntries((metadata.key_value_metadata ?? []).map((e) => [e.key, e.value]));
process.stdout.write(
  JSON.stringify({ rows, created_by: metadata.created_by, metadata: kv, schema, columns }) + '\n',
);
