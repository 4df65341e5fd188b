// Reads an orbit-matrix Parquet file with DuckDB (its Node package) and
// prints, as one JSON object, what the export test checks against
// orbitwatch's own numbers: the columns in file order with their DuckDB
// types, the file's key-value metadata, the row count, and the sum of
// every orbit column as a decimal string (DuckDB sums UBIGINT exactly,
// as HUGEINT).
//
// usage: node read.mjs FILE.parquet
import { DuckDBInstance } from '@duckdb/node-api';

const path = process.argv[2];
if (!path) {
  console.error('usage: node read.mjs FILE.parquet');
  process.exit(2);
}
const lit = "'" + path.replaceAll("'", "''") + "'";
const quote = (name) => '"' + name.replaceAll('"', '""') + '"';

const db = await DuckDBInstance.create(':memory:');
const conn = await db.connect();
const rows = async (sql) => (await conn.runAndReadAll(sql)).getRowObjectsJson();

const columns = (await rows(`DESCRIBE SELECT * FROM read_parquet(${lit})`))
  .map((r) => ({ name: r.column_name, type: r.column_type }));
const metadata = {};
for (const r of await rows(`SELECT decode(key) AS k, decode(value) AS v FROM parquet_kv_metadata(${lit})`)) {
  metadata[r.k] = r.v;
}
const orbitCols = columns.filter((c) => c.name !== 'node');
const sumList = orbitCols.map((c) => `CAST(sum(${quote(c.name)}) AS VARCHAR) AS ${quote(c.name)}`);
sumList.push('CAST(count(*) AS VARCHAR) AS "rows"');
const [agg] = await rows(`SELECT ${sumList.join(', ')} FROM read_parquet(${lit})`);
const sums = {};
for (const c of orbitCols) {
  sums[c.name] = agg[c.name] ?? '0';
}
console.log(JSON.stringify({ columns, metadata, rows: agg.rows, sums }));
