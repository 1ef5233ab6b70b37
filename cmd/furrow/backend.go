package main

import (
	"errors"
	"io"

	"furrow/plan"
)

// The calls into the plan and checker packages, gathered so that each
// command reads the same way.

// designSummary is the design as seen in the data, printable as text.
type designSummary interface {
	WriteText(w io.Writer) error
}

var errPending = errors.New("this build has no plan reader yet")

func loadPlan(path string) (*plan.Plan, plan.Diagnostics, error) {
	return nil, nil, errPending
}

func readTable(p *plan.Plan, dataPath string) (*tableHandle, plan.Diagnostics, error) {
	return nil, nil, errPending
}

type tableHandle struct{}

func checkData(p *plan.Plan, t *tableHandle) (plan.Diagnostics, designSummary) {
	return nil, nil
}
