// Package checker holds everything that needs both the plan and the data:
// reading the data file, checking it against the plan's data contract,
// running the planned cascade, and writing and verifying the record.
//
// The work is done in sub-packages, each importing only those below it:
//
//	table     reading the data file (CSV, XLSX) into a Table, file and content hashes
//	contract  the plan-vs-data contract (CheckData) and the design summary
//	record    the record: result types, audit encoding and hash, signing, registration, atomic writes
//	engine    the analysis: derivations, exclusions, fits, checks, the cascade, hypotheses, Run
//	verify    re-running a record's analysis and comparing (Verify)
//	simulate  the cascade on simulated data (Simulate)
//	render    the report and its figures, the plan document, simulation text
//
// This package forwards what cmd/furrow calls to them.
package checker
