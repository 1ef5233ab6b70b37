package table

// Test helpers exported to the external test package (fuzz_test.go).

// GoodCSV is goodCSV for the external tests.
const GoodCSV = goodCSV
