// Package table reads the data file a plan names, CSV or XLSX, into a
// [Table], and computes the table's file and content hashes.
//
// # Reading data
//
// [ReadTable] reads the file a plan names (or one given on the command
// line) into a [Table]: columns by name, each with the cell text, the cell
// parsed as a number (NaN when missing or not a number) and a missing mask,
// plus the row number a user sees for every row. CSV and XLSX give the same
// Table for the same cells.
//
// CSV is read as RFC 4180 text (Shafranovich 2005): fields may be quoted,
// quotes inside are doubled, quoted fields may span lines, and the row
// number of a record is the line where it starts. A UTF-8 byte-order mark
// and CRLF line endings are accepted. The delimiter is data.delimiter
// (default ","). Cells are trimmed of surrounding white space.
//
// A file written with another delimiter is caught at its header: when the
// first non-blank line gives at most one non-blank field with the declared
// delimiter, but at least two declared column names when split on ";",
// ",", tab or "|" (tried in that order, the one finding the most names
// kept), reading stops with one data-delimiter error at the header row
// that names the delimiter to declare, instead of a missing-column finding
// for every declared column and a ragged-row finding for every row.
//
// XLSX is read from the sheet data.sheet (default: the first sheet). Number
// cells and the cached values of formulas keep their value, written in
// shortest round-trip form; cells whose number format shows a date become
// YYYY-MM-DD (with THH:MM:SS when a time of day is shown); text cells are
// taken as they are, so numbers stored as text are still numbers. A cell
// that refers to a shared string the workbook does not hold, and a formula
// saved without its value, are data-xlsx-cell errors at the cell (the
// cell reads as blank). The workbook is read by this package itself
// (archive/zip and encoding/xml, no spreadsheet library), streaming the
// sheet row by row; a structure it cannot follow (rows or cells out of
// order, a reference past XFD1048576, XML that is not well formed) is an
// error naming the file, the part or sheet and the row.
//
// # Bounds
//
// No input makes ReadTable hold much more than the table it reads, or
// wait: see [ReadTableWith] and [Options]. Only regular files are read (a
// named pipe or a device is refused before it is opened for reading), of
// at most Options.MaxSize bytes (DefaultMaxSize, 2 GiB); the plan's
// data.file must resolve, after symbolic links, inside the plan's folder
// unless Options.AllowOutside. For XLSX, the parts read (relationships,
// workbook, styles, shared strings, the one sheet) are bounded before they
// are unpacked, by the sizes the archive declares: each, and all together,
// at most Options.MaxSize; a part of more than 10 MiB that unpacks to more
// than 100 times its packed size is refused as a zip bomb. Within a part,
// a text of more than 1 MiB without markup, elements nested more than 32
// deep and a document type declaration are refused, as is a shared-string
// table with more strings than the sheet has bytes (and at least 2^20).
// Rows shorter than the header are padded with blank cells; a table that
// would be mostly padding (more blank cells added than cells held in CSV,
// more than 8 per cell held in XLSX, whose rows leave trailing blanks out,
// once past 2^20) is refused with a *CellsError. A header cell with no name
// makes no column (a value under it is a data-header-blank error), so a
// stray space in column XFD costs nothing.
//
// A number is an optional sign, digits with at most one decimal mark
// (data.decimal, "." or ","), and an optional exponent; thousands
// separators, "inf" and "nan" are not numbers. The decimal mark applies to
// CSV cells and to XLSX text cells: with decimal: "," the text cell "3,75"
// is 3.75 and "3.75" is not a number, while XLSX number cells keep their
// value whatever the mark. A workbook has no delimiter, so an XLSX plan
// declares decimal: "," alone; a CSV file read with "," as both delimiter
// and decimal mark is an error. A cell is missing when it is blank or
// equals one of data.missing.
//
// A file that cannot be read as declared (missing, empty, binary, not
// UTF-8, an XLSX given as CSV or the other way round) is an error naming
// the file. Problems inside a readable file are diagnostics.
//
// # White space around cells
//
// Every cell, CSV or XLSX, is trimmed of the white space around it
// (Unicode white space: spaces, tabs, no-break spaces) before it is parsed
// as a number, compared with the missing codes or matched against the
// declared levels, and the Table holds the trimmed text. The trimming is
// not silent for levels: in a column the plan gives a factor role
// (treatment, factor, block, site, repeat, unit), each distinct untrimmed
// text is one data-level-space warning, positioned at its first cell, with
// the number of cells that hold exactly that text and the text it is read
// as:
//
//	column "treatment": level "ctl " has a trailing space (12 cells, first at row 3); it is read as "ctl"
//
// "ctl " and " ctl" are two warnings, as they are two texts to correct in
// the file. Cells that are missing once trimmed (blank, or a missing code)
// and cells of numeric, label and undeclared columns are not reported:
// there the white space changes no level.
//
// # Positions
//
// Data findings are [plan.Diagnostic] values positioned in the data file:
// Pos.Line is the row number and Pos.Column the 1-based column number, so a
// CSV cell prints as "plots.csv:17:4". For XLSX the file part names the
// sheet in brackets and the summary starts with the cell reference:
// "plots.xlsx[plots]:17:4: cell D17: ...". Related holds the plan line
// that declared the expectation (the column, the design or the data
// section).
//
// # Content hash
//
// [Table.ContentHash] is "sha256:" followed by the lower-case hex SHA-256
// of this byte serialisation of the table (so a reviewer can recompute it):
//
//	"furrow table v1\n"
//	"columns " <number of columns> " rows " <number of rows> "\n"
//	for each column in file order:   'c' <name as S> "\n"
//	for each row, for each column:   the cell as below; then "\n"
//
// where numbers are decimal ASCII, a string S is written as its byte length
// in decimal, ':' and its UTF-8 bytes, and a cell is 'm' when missing,
// 'n' followed by the number as S (shortest round-trip form, Go's
// strconv.FormatFloat(v, 'g', -1, 64)) in a column the plan declares
// numeric when it holds a number, and 't' followed by its trimmed text as S
// otherwise. Row numbers, the file format, quoting, delimiters and line
// endings do not enter, so a CSV file and an XLSX sheet with equal cells
// have the same content hash. [Table.FileHash] is the SHA-256 of the file's
// bytes and changes with any byte.
package table
