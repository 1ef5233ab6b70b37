// Package contract checks a [table.Table] against the plan's data contract
// ([CheckData]) and summarises the design found in the data
// ([DesignSummary]).
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
//	data-replication        a treatment cell (per site) with more units than
//	                        design.replicates, or fewer when the plan declares
//	                        no least-units
//	data-units-lost         a cell with fewer units than design.replicates but
//	                        at least design.least-units (warning; the lost units
//	                        are listed with their block in DesignSummary.Lost)
//	data-units-below-least  a cell (or treatment level, per: treatment) below
//	                        design.least-units: an error with below: stop, a
//	                        warning with below: warn
//	data-missing-values     missing values in a column, with counts (warning)
//
// and, from reading: data-ragged-row, data-quote, data-header-blank,
// data-header-repeated, data-blank-rows (warning), data-level-space
// (warning: a level read trimmed of white space), data-sheet-missing,
// data-no-header and data-delimiter (a CSV header that splits only on
// another delimiter than the declared one; it names the one to declare). After 20 findings of one code in one column the rest are
// counted in a single "and N more" finding. Unit identifiers must be unique
// across the trial: a unit that appears with two sites is reported, not
// taken as two units.
//
// # Column suggestions
//
// A declared column the file lacks and a file column the plan does not
// declare are paired in a suggestion ("did you mean "trt"?" on the first,
// "(is it the declared "treatment"?)" on the second) when their names are
// close: a near spelling (schema.Suggest: the same letters in another
// case, or a small edit distance), else an abbreviation, in either
// direction. One name abbreviates the other when it has at least three
// characters and fewer than the other, starts with the same character, and
// all its characters appear in the other in order, case ignored: a prefix
// ("treat", "rep" for "treatment", "replicate") or a contraction ("trt",
// "yld"). An abbreviation is suggested only when the pair is unique both
// ways: "trt" is not suggested when another undeclared file column also
// abbreviates "treatment", nor when it also abbreviates another missing
// declared column.
//
// # Lost units
//
// A unit is lost when the data hold no row of it ([CheckData]) or the
// declared exclusions removed every row of it ([CheckKept], called by
// the run after the exclusions). The block of a unit with no row is the
// block that lacks a unit of its cell, told when the blocks each hold
// design.replicates / blocks units of every cell; its identifier is not
// known. Both functions judge the cell's count by design.least-units.
package contract
