package engine

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"furrow/checker/method"
	"furrow/checker/record"
	"furrow/checker/table"
	"furrow/plan"
)

// fitted is what a model fit hands to the checks and to the hypotheses.
type fitted struct {
	summary   record.FitSummary
	n         int
	resid     []float64
	fit       []float64
	groups    []string // level of the compared factor per observation
	detail    *record.StepDetail
	ds        *dataset
	linear    *linearFit // linear and mixed models
	rankLike  bool       // rank and Welch steps: hypotheses by pairwise tests
	compare   string
	residOnly bool // no residuals (rank tests): checks use the analysed values
	// dropped are the observations of ds the model (or test) left out,
	// with why (record.UnusedIncompleteBlock) and the column concerned.
	dropped       []int
	droppedReason string
	droppedColumn string
}

// rowsUsed returns the data rows behind the observations the fit used and
// every row of the analysed table it did not use (derive's unused rows
// and the rows of dropped observations), in file order.
func (f *fitted) rowsUsed() (int, []record.UnusedRow) {
	unused := append([]record.UnusedRow{}, f.ds.unused...)
	drop := map[int]bool{}
	for _, g := range f.dropped {
		drop[g] = true
	}
	rows := 0
	for g, src := range f.ds.src {
		if !drop[g] {
			rows += len(src)
			continue
		}
		for _, r := range src {
			unused = append(unused, record.UnusedRow{Row: r, Unit: f.ds.units[g], Reason: f.droppedReason, Column: f.droppedColumn})
		}
	}
	slices.SortFunc(unused, func(a, b record.UnusedRow) int { return a.Row - b.Row })
	return rows, unused
}

// fitFunc fits one model kind.
type fitFunc func(p *plan.Plan, ep *plan.Endpoint, s *plan.Step, ds *dataset) (*fitted, error)

// Cascade holds the methods of this build (checks and model kinds, by
// the names the plan uses) and the fit of each model kind.
type Cascade struct {
	methods *method.Registry
	fits    map[string]fitFunc
}

// NewCascade returns a Cascade with every model kind and check of this
// build's registry, the one Run uses.
func NewCascade() *Cascade {
	return &Cascade{methods: method.Default, fits: modelFitters()}
}

// RunEndpoint executes an endpoint's cascade: start at the first step; fit;
// run every declared check; accept when all pass, else move to the step
// the failing check (first in plan order) or the step names; a step with
// nowhere to go is the last resort and is reported with its assumptions unmet.
func (e *Cascade) RunEndpoint(p *plan.Plan, kept *table.Table, ep *plan.Endpoint) record.EndpointResult {
	alpha := ep.Alpha
	if alpha == 0 {
		alpha = 0.05
	}
	er := record.EndpointResult{ID: ep.ID, Pos: posText(ep.Pos), Response: ep.Response, Primary: ep.Primary, Alpha: record.Num(alpha),
		Status: record.EndpointFailed, Hypotheses: []record.HypothesisResult{}, Observed: observedData(p, kept, ep.Response)}
	index := map[string]int{}
	for i, s := range ep.Steps {
		index[s.ID] = i
		er.Steps = append(er.Steps, record.StepResult{ID: s.ID, Pos: posText(s.Pos), Model: modelSpec(ep, &ep.Steps[i]),
			Checks: notRunChecks(&ep.Steps[i]), Unused: []record.UnusedRow{},
			Decision: record.Decision{Action: record.ActionSkip, Reason: record.ReasonNotReached, Detail: "the cascade did not reach this step"}})
	}
	var reported *fitted
	visited := map[int]bool{}
	cur := 0
	for cur >= 0 && cur < len(ep.Steps) && !visited[cur] {
		visited[cur] = true
		s := &ep.Steps[cur]
		sr := &er.Steps[cur]
		sr.Executed = true
		f, err := e.fitStep(p, kept, ep, s)
		next := -1
		if err != nil {
			sr.Error = err.Error()
			if s.OnFail != "" {
				next = index[s.OnFail]
				sr.Decision = record.Decision{Action: record.ActionFallBack, Reason: record.ReasonFitFailed, Next: s.OnFail, Rule: posText(s.Pos),
					Detail: fmt.Sprintf("the model could not be fitted; the step's on-fail names %s", s.OnFail)}
			} else {
				sr.Decision = record.Decision{Action: record.ActionStop, Reason: record.ReasonLastResortFitFailed, Rule: posText(s.Pos),
					Detail: "the model could not be fitted and the plan declares no further step"}
			}
			for k := range sr.Checks {
				sr.Checks[k].Error = "not run: the model could not be fitted"
			}
			cur = next
			continue
		}
		sr.N = f.n
		sr.Rows, sr.Unused = f.rowsUsed()
		sum := f.summary
		sr.Fit = &sum
		sr.Figures = figureData(f)
		// A check fails when its p-value is below its threshold; one that
		// cannot be computed counts as its not-computable declares.
		var failing, notComputed []int
		stop := -1
		for k := range s.Checks {
			c := &s.Checks[k]
			cr := e.runCheck(f, s, c)
			sr.Checks[k] = cr
			switch {
			case cr.Verdict == record.VerdictFail:
				failing = append(failing, k)
			case cr.Verdict == record.VerdictError:
				notComputed = append(notComputed, k)
				switch c.NotComputable {
				case plan.NotComputablePass:
				case plan.NotComputableStop:
					if stop < 0 {
						stop = k
					}
				default:
					failing = append(failing, k)
				}
			}
		}
		switch {
		case stop >= 0:
			c := &s.Checks[stop]
			sr.Decision = record.Decision{Action: record.ActionStop, Reason: record.ReasonCheckNotComputable, Rule: posText(c.Pos),
				Detail: fmt.Sprintf("%s could not be computed (%s); the plan declares that this stops the analysis of the endpoint (not-computable: stop)", c.Test, sr.Checks[stop].Error)}
			er.Status = record.EndpointStopped
		case len(failing) == 0:
			reason, detail := record.ReasonChecksPassed, "every declared check passed"
			if len(s.Checks) == 0 {
				reason, detail = record.ReasonNoChecks, "the step declares no checks"
			}
			if len(notComputed) > 0 {
				var names []string
				for _, k := range notComputed {
					names = append(names, s.Checks[k].Test)
				}
				detail = fmt.Sprintf("every declared check passed, %s counting as passed when it cannot be computed, as the plan declares (not-computable: pass)", strings.Join(names, " and "))
			}
			sr.Decision = record.Decision{Action: record.ActionAccept, Reason: reason, Rule: posText(s.Pos), Detail: detail}
			er.Status = record.EndpointAccepted
			reported = f
		default:
			first := failing[0]
			c := &s.Checks[first]
			cr := sr.Checks[first]
			var whats []string
			for _, k := range failing {
				ck, crk := &s.Checks[k], sr.Checks[k]
				if crk.Verdict == record.VerdictError {
					whats = append(whats, fmt.Sprintf("%s could not be computed (%s) and counts as failed (not-computable: fail)", ck.Test, crk.Error))
				} else {
					whats = append(whats, fmt.Sprintf("%s p = %s is below %g", ck.Test, decisionP(float64(crk.P)), ck.FailBelow))
				}
			}
			what := strings.Join(whats, "; ")
			if cr.OnFail != "" {
				next = index[cr.OnFail]
				via := ""
				if len(failing) > 1 {
					via = " (the on-fail of " + c.Test + ", the first failing check)"
				}
				sr.Decision = record.Decision{Action: record.ActionFallBack, Reason: record.ReasonCheckFailed, Next: cr.OnFail, Rule: posText(c.Pos),
					Detail: what + "; the plan moves to " + cr.OnFail + via}
			} else {
				sr.Decision = record.Decision{Action: record.ActionReportUnmet, Reason: record.ReasonLastResortAssumptionsUnmet, Rule: posText(c.Pos),
					Detail: what + "; this is the last declared step, so its results are reported with the assumptions not met"}
				er.Status = record.EndpointAssumptionsUnmet
				reported = f
			}
		}
		if stop >= 0 {
			break
		}
		if reported != nil {
			sr.Results = f.detail
			er.Reported = s.ID
			er.RowsAnalysed = sr.Rows
			break
		}
		cur = next
	}
	if reported != nil {
		for i := range ep.Hypotheses {
			er.Hypotheses = append(er.Hypotheses, hypothesis(p, ep, &ep.Steps[index[er.Reported]], reported, &ep.Hypotheses[i], alpha))
		}
	}
	return er
}

func notRunChecks(s *plan.Step) []record.CheckResult {
	out := []record.CheckResult{}
	for _, c := range s.Checks {
		onFail := c.OnFail
		if onFail == "" {
			onFail = s.OnFail
		}
		out = append(out, record.CheckResult{Test: c.Test, Pos: posText(c.Pos), By: c.By, Statistic: record.NaN, P: record.NaN,
			FailBelow: record.Num(c.FailBelow), Verdict: record.VerdictNotRun, OnFail: onFail})
	}
	return out
}

// fitStep derives the outcome, applies the transform and fits the model.
func (e *Cascade) fitStep(p *plan.Plan, kept *table.Table, ep *plan.Endpoint, s *plan.Step) (f *fitted, err error) {
	defer func() {
		// A numerical routine that panics on odd data must not take the run
		// down; it is recorded as a fit error of this step.
		if v := recover(); v != nil {
			f, err = nil, fmt.Errorf("internal error while fitting: %v", v)
		}
	}()
	ds, err := derive(p, kept, ep.Response, s.Outcome, s.Transform, s.Covariates)
	if err != nil {
		return nil, err
	}
	fit := e.fits[s.Model]
	if fit == nil {
		return nil, fmt.Errorf("model %q is not available in this build", s.Model)
	}
	f, err = fit(p, ep, s, ds)
	if err != nil {
		return nil, err
	}
	f.ds = ds
	f.n = ds.n() - len(f.dropped)
	if f.detail != nil {
		f.detail.Scale = scaleText(ep.Response, s.Outcome, s.Transform)
	}
	return f, nil
}

func figureData(f *fitted) *record.DiagnosticData {
	fd := &record.DiagnosticData{Fitted: record.Nums(f.fit), Residuals: record.Nums(f.resid), Groups: f.groups, Values: record.Nums(f.ds.y)}
	fd.Units = f.ds.units
	return fd
}

// decisionP formats a p-value for a decision sentence (4 significant digits).
func decisionP(p float64) string {
	if math.IsNaN(p) {
		return "NA"
	}
	return fmt.Sprintf("%.4g", p)
}
