package checker

import (
	"crypto/ed25519"
	"io"

	"furrow/checker/record"
	"furrow/checker/render"
	"furrow/checker/simulate"
	"furrow/plan"
)

// Names inside a run directory; see [render.ReportHTMLName].
const (
	ReportHTMLName = render.ReportHTMLName
	ReportMDName   = render.ReportMDName
	TablesDir      = render.TablesDir
)

// Document is a plan rendered as a document; see [render.Document].
type Document = render.Document

// SimOptions are the inputs of Simulate; see [simulate.SimOptions].
type SimOptions = simulate.SimOptions

// SimResult is what Simulate found; see [simulate.SimResult].
type SimResult = simulate.SimResult

// SimRate is a rate with its Monte Carlo standard error; see
// [simulate.SimRate].
type SimRate = simulate.SimRate

// DefaultSimRuns is the number of simulated data sets when
// SimOptions.Runs is 0.
const DefaultSimRuns = simulate.DefaultSimRuns

// SimNormal is the default error shape of Simulate.
const SimNormal = simulate.SimNormal

// WriteRun writes the run folder dir whole or not at all: the reports and
// tables of r and its record (sealed, signed with key when it is not nil)
// are written into a folder beside dir, which is renamed to dir when
// complete; replace swaps an existing run folder out whole. See
// [record.WriteRun].
func WriteRun(dir string, r *Result, key ed25519.PrivateKey, replace bool) error {
	return record.WriteRun(dir, r, key, replace, func(tmp string) error { return render.WriteReports(tmp, r) })
}

// CheckRunDir says whether WriteRun could write dir (an advisory check
// before the analysis); see [record.CheckRunDir].
func CheckRunDir(dir string, replace bool) error { return record.CheckRunDir(dir, replace) }

// ExistsError is WriteRun's error for a run folder that exists; see
// [record.ExistsError].
type ExistsError = record.ExistsError

// Explain renders the plan as a document; hash is the plan's canonical
// hash. See [render.Explain].
func Explain(p *plan.Plan, hash string) *Document { return render.Explain(p, hash) }

// Simulate runs the plan's cascades on simulated data sets; see
// [simulate.Simulate].
func Simulate(p *plan.Plan, opt SimOptions) (*SimResult, error) { return simulate.Simulate(p, opt) }

// WriteSimulation writes simulation results as text; see
// [render.WriteSimulation].
func WriteSimulation(w io.Writer, r *SimResult) error { return render.WriteSimulation(w, r) }
