// Command furrow makes a trial's statistical analysis plan executable and
// checkable.
//
// The analyst writes the plan as YAML before the data arrive. furrow lints
// the plan, checks the final data against it, and (with the analysis
// engine) runs exactly the planned cascade of models and checks.
//
// # Commands
//
// Run "furrow help" for the list and "furrow COMMAND -h" for the details
// of one command. Each command lives in its own file and is one entry of
// the commands table in commands.go.
//
// # Exit codes
//
// Every command uses the same three codes (see exitCodesHelp):
//
//	0  clean: no errors (warnings alone still exit 0)
//	1  findings: errors in the plan or the data
//	2  usage error, or an input that cannot be read
//
// # Machine-readable output
//
// With --json, lint and check print one JSON object (see report in
// findings.go) instead of text.
package main
