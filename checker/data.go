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

// CheckData checks a table against the plan's data contract; see
// [contract.CheckData].
func CheckData(p *plan.Plan, t *Table) (plan.Diagnostics, *DesignSummary) {
	return contract.CheckData(p, t)
}
