package table

// Test helpers exported to the external test package (fuzz_test.go).

// TablePlan is tablePlan for the external tests.
var TablePlan = tablePlan

// GoodCSV is goodCSV for the external tests.
const GoodCSV = goodCSV
