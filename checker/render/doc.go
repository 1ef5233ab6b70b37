// Package render turns records and plans into documents for people: the
// run report in HTML, Markdown and CSV tables with its figures
// ([WriteReports]), the plan document ([Explain]) and the text of
// simulation results ([WriteSimulation]).
//
// Only figures.go imports gonum.org/v1/plot. The report is rendered from
// the record alone and the plan document from the plan alone; neither
// needs the analysis engine.
package render
