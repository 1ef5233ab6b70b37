package main

import (
	"fmt"
	"runtime/debug"

	"furrow/plan"
)

const versionUsage = `usage: furrow version

Prints the version of this furrow build and the plan-format version it
reads (the value of a plan's top-level "furrow" field).

` + exitCodesHelp

var versionCommand = &command{
	name:    "version",
	summary: "print the furrow version and the plan format it reads",
	usage:   versionUsage,
	run:     runVersion,
}

func runVersion(e *env, c *command, args []string) int {
	fs := newFlags(c)
	if _, ok, code := parse(e, c, fs, args, 0, 0); !ok {
		return code
	}
	fmt.Fprintf(e.stdout, "furrow %s\nplan format %d\n", toolVersion(), plan.FormatVersion)
	return exitOK
}

// toolVersion is the module version from the build information: a tag
// for "go install furrow@vX", "(devel)" for a build from a checkout, with
// the VCS revision appended when the build recorded it.
func toolVersion() string {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return "(unknown)"
	}
	v := bi.Main.Version
	if v == "" {
		v = "(devel)"
	}
	var rev string
	var dirty bool
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			dirty = s.Value == "true"
		}
	}
	if rev != "" {
		if len(rev) > 12 {
			rev = rev[:12]
		}
		v += " " + rev
		if dirty {
			v += "+modified"
		}
	}
	return v
}
