package checker

import (
	"furrow/checker/contract"
	"furrow/checker/table"
	"furrow/plan"
)

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
