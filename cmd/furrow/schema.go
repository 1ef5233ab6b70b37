package main

import (
	"furrow/schema"
)

const schemaUsage = `usage: furrow schema [plan]

Prints the JSON Schema (draft 2020-12) of the plan language, as embedded
in this furrow. Editors that read the "# yaml-language-server: $schema=..."
comment at the top of a plan use it to check and complete the plan while
it is written. "plan" is the only schema name so far and the default.

Example:
  furrow schema > plan.schema.json

` + exitCodesHelp

var schemaCommand = &command{
	name:    "schema",
	summary: "print the JSON Schema of the plan language",
	usage:   schemaUsage,
	run:     runSchema,
}

// schemas maps the names "furrow schema" accepts to their embedded text.
var schemas = map[string]func() []byte{
	"plan": schema.PlanJSON,
}

func runSchema(e *env, c *command, args []string) int {
	fs := newFlags(c)
	pos, ok, code := parse(e, c, fs, args, 0, 1)
	if !ok {
		return code
	}
	name := "plan"
	if len(pos) == 1 {
		name = pos[0]
	}
	get, ok := schemas[name]
	if !ok {
		return usageError(e, c, "unknown schema "+quote(name)+"; known: plan")
	}
	b := get()
	if len(b) > 0 && b[len(b)-1] != '\n' {
		b = append(b, '\n')
	}
	if _, err := e.stdout.Write(b); err != nil {
		return fail(e, c, err)
	}
	return exitOK
}

func quote(s string) string { return `"` + s + `"` }
