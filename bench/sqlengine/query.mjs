// A yardstick for the `threads` bench section: a general-purpose columnar SQL
// engine (DuckDB, through its Node client @duckdb/node-api, installed by
// bench/run.sh into bench/sqlengine/node_modules) with a multi-threaded CSV
// reader, asked for plain aggregates over one CSV file in one query.
//
//   node bench/sqlengine/query.mjs aggregates|correlations FILE [THREADS]
//
// aggregates:   for every numeric column count, mean, sample variance, min, max
// correlations: the same plus Pearson r of every pair of numeric columns,
//               corr(a, b) (each pair over the rows where both are present)
//
// The numeric columns are the BIGINT/DOUBLE columns of the engine's own type
// detection over the file's header and a sample of its rows; '' and 'NA' are
// read as missing (the spellings the bench table uses). This computes far
// less than `sheaf scan`: no sketches, no class tables, no distinct counts,
// no quantiles. Prints the row count and a few figures as a sanity check.
import { DuckDBInstance } from '@duckdb/node-api';

const [variant, file, threadsArg] = process.argv.slice(2);
if (!['aggregates', 'correlations'].includes(variant) || !file) {
  console.error('usage: query.mjs aggregates|correlations FILE [THREADS]');
  process.exit(2);
}
const threads = Number(threadsArg ?? 2);
if (!Number.isInteger(threads) || threads < 1) {
  console.error('query.mjs: THREADS must be a positive integer');
  process.exit(2);
}

const quoteText = (s) => "'" + s.replaceAll("'", "''") + "'";
const quoteName = (s) => '"' + s.replaceAll('"', '""') + '"';
const table = `read_csv(${quoteText(file)}, header = true, nullstr = ['', 'NA'])`;

const instance = await DuckDBInstance.create(':memory:');
const connection = await instance.connect();
await connection.run(`SET threads = ${threads}`);

const described = await connection.runAndReadAll(`DESCRIBE SELECT * FROM ${table}`);
const numericTypes = new Set(['TINYINT', 'SMALLINT', 'INTEGER', 'BIGINT', 'HUGEINT',
  'UTINYINT', 'USMALLINT', 'UINTEGER', 'UBIGINT', 'FLOAT', 'DOUBLE']);
const numeric = described.getRowObjectsJson()
  .filter((row) => numericTypes.has(String(row.column_type)) || String(row.column_type).startsWith('DECIMAL'))
  .map((row) => String(row.column_name));

const select = ['count(*) AS "rows"'];
numeric.forEach((name, i) => {
  const c = quoteName(name);
  select.push(`count(${c}) AS n${i}`, `avg(${c}) AS mean${i}`, `var_samp(${c}) AS var${i}`,
    `min(${c}) AS min${i}`, `max(${c}) AS max${i}`);
});
let pairs = 0;
if (variant === 'correlations') {
  for (let i = 0; i < numeric.length; i++) {
    for (let j = i + 1; j < numeric.length; j++) {
      select.push(`corr(${quoteName(numeric[i])}, ${quoteName(numeric[j])}) AS r${i}_${j}`);
      pairs++;
    }
  }
}

const reader = await connection.runAndReadAll(`SELECT ${select.join(', ')} FROM ${table}`);
const row = reader.getRowObjectsJson()[0];
connection.closeSync();

console.log(`rows ${row.rows}; ${numeric.length} numeric columns; ${pairs} correlations`);
for (const i of [0, numeric.length - 1]) {
  console.log(`${numeric[i]}: n ${row['n' + i]} mean ${row['mean' + i]} var ${row['var' + i]} ` +
    `min ${row['min' + i]} max ${row['max' + i]}`);
}
if (pairs > 0) console.log(`r(${numeric[0]}, ${numeric[1]}) = ${row.r0_1}`);
