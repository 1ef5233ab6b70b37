package checker

import (
	"io"

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

// WriteReports writes the report of r into the run directory dir; see
// [render.WriteReports].
func WriteReports(dir string, r *Result) error { return render.WriteReports(dir, r) }

// Explain renders the plan as a document; hash is the plan's canonical
// hash. See [render.Explain].
func Explain(p *plan.Plan, hash string) *Document { return render.Explain(p, hash) }

// Simulate runs the plan's cascades on simulated data sets; see
// [simulate.Simulate].
func Simulate(p *plan.Plan, opt SimOptions) (*SimResult, error) { return simulate.Simulate(p, opt) }

// WriteSimulation writes simulation results as text; see
// [render.WriteSimulation].
func WriteSimulation(w io.Writer, r *SimResult) error { return render.WriteSimulation(w, r) }
