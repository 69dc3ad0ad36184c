// Package report prints what memix commands compute: key–value fields and
// tables of numbers, as aligned text for people, or as JSON or CSV for
// scripts. Every command that prints numbers builds a Doc and calls Write,
// so all commands share one layout and one machine format.
//
// # Formats
//
// Text: the fields as "Title: value" lines, then each table under its
// title, with units in brackets in the header, then the table's notes.
// Cells may carry a separate text for people (Cell), e.g. "561.8 nm"
// where JSON and CSV get 5.618e-07 in the column's SI unit.
//
// JSON: one object. Each field is a member under its key; each table is a
// member under its key holding {"title", "columns": [{"key", "unit"}],
// "rows": [{column key: value}]}. Numbers are in the columns' units;
// infinite or NaN numbers are null.
//
// CSV: a document of exactly one table and no fields is plain CSV with a
// header row of column keys, each followed by its unit in brackets
// ("value [m]"). Otherwise each block (the fields as a key,value table,
// then every table) is preceded by a line "# key" and separated from the
// next by an empty line.
package report
