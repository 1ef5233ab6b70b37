package render

// Text rendering of simulation results (furrow simulate without --json).

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"

	"furrow/checker/simulate"
	"furrow/plan"
)

// simPct formats a rate and its Monte Carlo standard error in percent.
func simPct(r simulate.SimRate) string {
	if r.Of == 0 {
		return "-"
	}
	return fmt.Sprintf("%.1f%% ± %.1f", 100*r.Rate, 100*r.SE)
}

// simTests says how many comparisons and term tests a family holds.
func simTests(n int) string {
	if n == 1 {
		return "1 comparison or term test"
	}
	return strconv.Itoa(n) + " comparisons and term tests"
}

// simNum formats a model parameter compactly.
func simNum(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }

// WriteSimulation writes the results of [simulate.Simulate] to w as the
// text that furrow simulate prints.
func WriteSimulation(w io.Writer, r *simulate.SimResult) error {
	var b strings.Builder
	truth := "no treatment effect (the null)"
	if len(r.Effects) > 0 {
		var parts []string
		for _, ef := range r.Effects {
			parts = append(parts, ef.Level+" "+simNum(ef.Delta))
		}
		truth = "treatment shifts " + strings.Join(parts, ", ")
	}
	fmt.Fprintf(&b, "%s: %d simulated data sets of %d rows, seed %d, %s errors, %s\n", r.Trial, r.Runs, r.Rows, r.Seed, r.Errors, truth)
	for _, m := range r.Responses {
		fmt.Fprintf(&b, "model of %s: %s scale, mean %s, residual sd %s", m.Column, m.Scale, simNum(m.Mean), simNum(m.ResidualSD))
		for _, sd := range []struct {
			name string
			v    float64
		}{{"site", m.SiteSD}, {"block", m.BlockSD}, {"unit", m.UnitSD}} {
			if sd.v > 0 {
				fmt.Fprintf(&b, ", %s sd %s", sd.name, simNum(sd.v))
			}
		}
		if m.GroupSD > 0 {
			fmt.Fprintf(&b, ", sd %s for each of %s", simNum(m.GroupSD), strings.Join(m.Groups, ", "))
		}
		if m.Redrawn > 0 {
			fmt.Fprintf(&b, "; %.2f%% of errors redrawn to stay in range", 100*m.Redrawn)
		}
		b.WriteString("\n")
	}
	fmt.Fprintf(&b, "rates are %% of runs ± Monte Carlo standard error (points); check rates are of the runs that ran the check\n")
	for _, ep := range r.Endpoints {
		fmt.Fprintf(&b, "\nendpoint %s (%s, alpha %s)\n", ep.ID, ep.Response, simNum(ep.Alpha))
		tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
		fmt.Fprintf(tw, "  step\tmodel\treached\treported\tchecks not met\n")
		for i, s := range ep.Steps {
			var checks []string
			for _, ck := range s.Checks {
				t := ck.Test + " " + simPct(ck.NotMet)
				if ck.Errors > 0 {
					t += fmt.Sprintf(" (%d not computed)", ck.Errors)
				}
				checks = append(checks, t)
			}
			rep := simPct(s.Reported)
			if s.Unmet.Count > 0 {
				rep += fmt.Sprintf(" (%s unmet)", simPct(s.Unmet))
			}
			if s.FitFailed.Count > 0 {
				checks = append(checks, fmt.Sprintf("fit failed %s", simPct(s.FitFailed)))
			}
			fmt.Fprintf(tw, "  %d %s\t%s\t%s\t%s\t%s\n", i+1, s.ID, s.Model, simPct(s.Reached), rep, strings.Join(checks, "; "))
		}
		if ep.Failed.Count > 0 {
			fmt.Fprintf(tw, "  no step reported\t\t\t%s\t\n", simPct(ep.Failed))
		}
		if err := tw.Flush(); err != nil {
			return err
		}
		if len(ep.Hypotheses) > 0 {
			b.WriteString("\n")
			tw = tabwriter.NewWriter(&b, 0, 0, 2, ' ', 0)
			fmt.Fprintf(tw, "  hypothesis\ttrue delta\trejected\n")
			for _, h := range ep.Hypotheses {
				what := h.Kind
				if h.Sides != "" {
					what += ", " + h.Sides
				}
				if h.Adjust != "" {
					what += ", " + h.Adjust
				}
				extra := ""
				if h.Assessable.Count < h.Assessable.Of {
					extra = fmt.Sprintf("; assessable %s", simPct(h.Assessable))
				}
				fmt.Fprintf(tw, "  %s (%s)\t\tany %s%s\n", h.ID, what, simPct(h.Any), extra)
				for _, cm := range h.Comparisons {
					d := simNum(cm.Delta)
					if h.Kind == plan.HypTerm {
						d = "0"
						if !cm.TrueNull {
							d = "not 0"
						}
					}
					fmt.Fprintf(tw, "    %s\t%s\t%s\n", cm.Label, d, simPct(cm.Rejected))
				}
			}
			if err := tw.Flush(); err != nil {
				return err
			}
		}
		b.WriteString("\n")
		switch {
		case ep.FamilyWiseOf == 0:
			b.WriteString("No comparison or term test of this endpoint has a zero true effect, so none can be falsely rejected.\n")
		case len(r.Effects) == 0:
			fmt.Fprintf(&b, "Under the null, the probability of at least one false rejection across the %s of %s (the family-wise error of the whole cascade; equivalence and non-inferiority not counted) is %s points, against alpha %s.\n",
				simTests(ep.FamilyWiseOf), ep.ID, simPct(ep.FamilyWise), simNum(ep.Alpha))
		default:
			fmt.Fprintf(&b, "The probability of at least one false rejection among the %s of %s whose true effect is zero (equivalence and non-inferiority not counted) is %s points, against alpha %s.\n",
				simTests(ep.FamilyWiseOf), ep.ID, simPct(ep.FamilyWise), simNum(ep.Alpha))
		}
	}
	// tabwriter pads empty last cells; no line ends in spaces
	lines := strings.Split(b.String(), "\n")
	for i, l := range lines {
		lines[i] = strings.TrimRight(l, " ")
	}
	_, err := io.WriteString(w, strings.Join(lines, "\n"))
	return err
}
