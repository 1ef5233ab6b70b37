package main

import (
	"furrow/schema"
)

const schemaUsage = `usage: furrow schema [plan | audit | registration]

Prints one of the JSON Schemas (draft 2020-12) embedded in this furrow:

  plan          the plan language (the default). Editors that read the
                "# yaml-language-server: $schema=..." comment at the top of
                a plan use it to check and complete the plan as it is written.
  audit         the audit record a run writes (DIR/audit.json)
  registration  the registration record "furrow register" writes

Example:
  furrow schema > plan.schema.json
  furrow schema audit > audit.schema.json

` + exitCodesHelp

var schemaCommand = &command{
	name:    "schema",
	summary: "print a JSON Schema (plan language, audit or registration record)",
	usage:   schemaUsage,
	run:     runSchema,
}

// schemas maps the names "furrow schema" accepts to their embedded text.
var schemas = map[string]func() []byte{
	"plan":         schema.PlanJSON,
	"audit":        embedded("audit.schema.json"),
	"registration": embedded("registration.schema.json"),
}

// embedded returns the text of an embedded schema file. The files are part
// of the build, so a missing one is a build defect.
func embedded(file string) func() []byte {
	return func() []byte {
		s, err := schema.ByName(file)
		if err != nil {
			panic("furrow: " + err.Error())
		}
		return s.JSON()
	}
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
		return usageError(e, c, "unknown schema "+quote(name)+"; known: plan, audit, registration")
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
