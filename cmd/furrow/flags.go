package main

// Flag names, one place for all commands. Go's flag package accepts each
// with one or two leading dashes.
const (
	flagJSON    = "json"    // machine-readable findings
	flagSummary = "summary" // check: print the design summary even when clean
	flagHelp    = "h"       // help (also -help, --help)
)
