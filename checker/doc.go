// Package checker holds everything that needs both the plan and the data:
// reading the data file, checking it against the plan's data contract,
// running the planned cascade, and writing and verifying the record.
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
// XLSX is read from the sheet data.sheet (default: the first sheet). Number
// cells and the cached values of formulas keep their value, written in
// shortest round-trip form; cells whose number format shows a date become
// YYYY-MM-DD (with THH:MM:SS when a time of day is shown); text cells are
// taken as they are, so numbers stored as text are still numbers.
//
// A number is an optional sign, digits with at most one decimal mark
// (data.decimal, "." or ","), and an optional exponent; thousands
// separators, "inf" and "nan" are not numbers. A cell is missing when it is
// blank or equals one of data.missing.
//
// A file that cannot be read as declared (missing, empty, binary, not
// UTF-8, an XLSX given as CSV or the other way round) is an error naming
// the file. Problems inside a readable file are diagnostics.
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
// # Data contract
//
// [CheckData] reports, each with its code:
//
//	data-column-missing     a declared column is not in the file (with a suggestion)
//	data-column-undeclared  a file column the plan does not declare (warning)
//	data-not-number         a numeric column holds text (with a decimal-mark hint)
//	data-out-of-range       a value outside the declared plausible range
//	                        (a warning when an out-of-range exclusion drops it)
//	data-level-undeclared   a level the plan does not declare
//	data-level-unseen       a declared level that never occurs (warning)
//	data-duplicate-record   a unit twice at one time (beyond the declared sub-samples)
//	data-unit-inconsistent  a unit whose treatment, block, site or factor changes
//	data-record-missing     a unit with no record at a declared time (warning)
//	data-replication        a treatment cell (per site) whose unit count is not
//	                        design.replicates
//	data-missing-values     missing values in a column, with counts (warning)
//
// and, from reading: data-ragged-row, data-quote, data-header-blank,
// data-header-repeated, data-blank-rows (warning), data-sheet-missing and
// data-no-header. After 20 findings of one code in one column the rest are
// counted in a single "and N more" finding. Unit identifiers must be unique
// across the trial: a unit that appears with two sites is reported, not
// taken as two units.
//
// # The cascade
//
// For each endpoint the steps run in plan order starting with the first.
// A step derives its outcome (the transform is applied to each measured
// value before a change or baseline derivation, after averaging for a unit
// mean), fits, and runs each declared check against its threshold. All
// checks passing accepts the step; a failing check (or a check that
// cannot be computed) moves to the check's on-fail, else the step's; a
// step that cannot be fitted moves to the step's on-fail. A failing last
// step is reported with status assumptions-unmet. Every decision is
// recorded with a Reason code and the plan position of the rule that
// caused it; nothing the plan does not declare is run.
//
// # Linear and mixed steps
//
// The fixed part uses sum-to-zero coding, so Type III tests are the
// marginal tests of each term. Linear steps are fitted by pivoted QR
// (stats/lm); mixed steps by REML or ML (stats/lmm) with one random
// intercept per random term: a term of several columns groups by the
// combination of their levels (nesting), separate terms are crossed.
// Fixed columns aliased by empty cells are found by the least-squares QR,
// left out and reported. Checks use the conditional residuals. Marginal
// means weight the other factors' levels equally. Single contrasts use
// their own Satterthwaite or Kenward-Roger df; a Dunnett or Tukey family
// on a mixed step uses the smallest df of its comparisons (the Note says
// so), and when the contrasts' correlation is not of the one-factor form
// the Dunnett probabilities come from randomised quasi-Monte Carlo with a
// fixed seed, whose seed and error the Note records.
//
// # Rank and Welch steps
//
// Steps of kind kruskal-wallis, friedman (blocks: within), signed-rank,
// rank-sum, van-elteren (strata: within) and welch run the stats/rank test
// on the derived outcome. The step's results carry the global test
// (method, statistic, df, p) and, per level of the compared factor, n,
// mean, median and SD; Welch steps add the level means with t intervals.
// A signed-rank step without compare tests the per-unit outcome (H0:
// median 0); with compare and within it tests the paired differences,
// first declared level minus second. A van-elteren step with two levels
// gives van Elteren's Z, with more the k-sample statistic; Friedman and
// paired signed-rank steps leave out blocks that lack a level (the method
// text counts them) and refuse a block with two values at one level.
//
// There is no model, so checks declared on such a step run on
// deviations that centre the analysed values: from the level means
// (welch, the residuals of the cell-means model), from the level medians
// (kruskal-wallis, rank-sum), from the level medians within each stratum
// (van-elteren), after one median-polish sweep over blocks and levels
// (friedman, paired signed-rank), or from the median difference
// (one-sample signed-rank).
//
// Hypotheses on a rank or Welch step are answered by separate two-sample
// tests with the declared sides: Welch t tests (Welch-Satterthwaite df) on
// a Welch step; van Elteren's stratified test within the step's within on
// van-elteren and friedman steps; the signed-rank test of the paired
// differences on a paired signed-rank step; the rank-sum test otherwise.
// Rank comparisons report the Hodges & Lehmann (1963) estimate (the median
// of the pairwise differences; the median of the Walsh averages of the
// paired differences; the common shift within strata from inverting van
// Elteren's statistic) with its distribution-free interval from inverting
// the same test (Moses 1953; Bauer 1972) at 1 - alpha on the declared
// sides, no standard error, and on log scales the ratio with its interval.
// The intervals are per comparison, also under an adjustment. Adjustments bonferroni,
// holm, hochberg and benjamini-hochberg apply as declared; a declared
// dunnett or tukey, which rests on the joint distribution of a model's
// contrasts, is replaced by holm (AdjustUsed and Note say so).
// Equivalence and non-inferiority are two one-sided tests with the Welch
// df on a Welch step; on a rank step the two-sided 1 - 2 alpha
// Hodges-Lehmann interval is compared with the margins, the one-sided
// p-values being the rank test of the shift at each margin. Term
// hypotheses are not assessable on either.
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
package checker
