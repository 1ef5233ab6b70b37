package checker

import (
	"furrow/checker/contract"
	"furrow/checker/method"
	"furrow/checker/table"
	"furrow/plan"
)

// LoadPlan reads and validates a plan file against this build's methods
// (the registry of checks and model kinds); see [plan.Load].
func LoadPlan(path string) (*plan.Plan, plan.Diagnostics, error) {
	return plan.Load(path, method.Default)
}

// Table is a data file read into columns by name; see [table.Table].
type Table = table.Table

// DesignSummary describes the data as CheckData found them; see
// [contract.DesignSummary].
type DesignSummary = contract.DesignSummary

// ReadTable reads the data file of p, or dataPath when it is not empty,
// into a Table; see [table.ReadTable].
func ReadTable(p *plan.Plan, dataPath string) (*Table, plan.Diagnostics, error) {
	return table.ReadTable(p, dataPath)
}

// DataOptions bound the reading of a data file: the size limit, and
// whether the plan's data.file may lie outside the plan's folder; see
// [table.Options].
type DataOptions = table.Options

// DefaultMaxDataSize is the size limit on data files when DataOptions
// give none; see [table.DefaultMaxSize].
const DefaultMaxDataSize = table.DefaultMaxSize

// SizeError is the error for a data file over the size limit; see
// [table.SizeError].
type SizeError = table.SizeError

// UnpackRatioError is the error for a workbook part that unpacks to more
// than the unpack ratio limit; see [table.UnpackRatioError].
type UnpackRatioError = table.UnpackRatioError

// DefaultMaxUnpackRatio is the unpack ratio limit on workbook parts when
// DataOptions give none; see [table.DefaultMaxUnpackRatio].
const DefaultMaxUnpackRatio = table.DefaultMaxUnpackRatio

// OutsideError is the error for a plan's data.file outside the plan's
// folder; see [table.OutsideError].
type OutsideError = table.OutsideError

// ReadTableWith is ReadTable with the reading bounded by o; see
// [table.ReadTableWith].
func ReadTableWith(p *plan.Plan, dataPath string, o DataOptions) (*Table, plan.Diagnostics, error) {
	return table.ReadTableWith(p, dataPath, o)
}

// CheckData checks a table against the plan's data contract; see
// [contract.CheckData].
func CheckData(p *plan.Plan, t *Table) (plan.Diagnostics, *DesignSummary) {
	return contract.CheckData(p, t)
}
