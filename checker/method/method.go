package method

import (
	"fmt"
	"slices"
	"strings"

	"furrow/plan"
)

// Target says what a check examines.
type Target int

// Targets.
const (
	// Residuals: the residuals (or deviations) as one sample.
	Residuals Target = iota
	// ResidualsByGroup: the residuals split by the joint levels of the
	// check's by columns (default: the treatment column).
	ResidualsByGroup
	// ResidualsVsFitted: the residuals against the fitted values.
	ResidualsVsFitted
)

// Input is what a check's Run sees. Inputs are only read.
type Input struct {
	// Resid are the residuals (or the deviations of a model-free step).
	Resid []float64
	// Fitted are the fitted values, same length as Resid (nil for a
	// model-free step without them).
	Fitted []float64
	// Groups are the residuals split by the by columns (ResidualsByGroup
	// checks only), groups in order of first appearance.
	Groups [][]float64
	// By names the grouping columns (ResidualsByGroup checks only).
	By []string
}

// Outcome is what a check's Run returns.
type Outcome struct {
	// On says what was tested ("residuals", "residuals by trt").
	On string
	// N is the number of values tested.
	N int
	// Statistic is the test statistic.
	Statistic float64
	// DF are the statistic's degrees of freedom, if it has any.
	DF []float64
	// P is the p-value compared with the check's threshold.
	P float64
}

// Check is one assumption check a plan can declare.
type Check struct {
	// Name is the plan's name of the check ("shapiro-wilk").
	Name string
	// Title is the name of the test as the trade writes it.
	Title string
	// Doc is one paragraph: what the check tests, how, and its source.
	Doc string
	// Words names the check in a sentence ("Shapiro-Wilk test of the
	// residuals").
	Words string
	// Target says what the check examines.
	Target Target
	// Run computes the test. It must not modify in.
	Run func(in Input) (Outcome, error)
}

// Rules returns the plan-language rules of the check.
func (c *Check) Rules() plan.CheckRules {
	return plan.CheckRules{Grouped: c.Target == ResidualsByGroup}
}

// on says what a check of the target examined, for Outcome.On.
func on(t Target, by []string) string {
	switch t {
	case ResidualsByGroup:
		return "residuals by " + strings.Join(by, ":")
	case ResidualsVsFitted:
		return "residuals vs fitted"
	}
	return "residuals"
}

// Pairing says how a step compares two levels of a factor when it
// answers a comparison hypothesis.
type Pairing int

// Pairings.
const (
	// Contrasts: a linear contrast of the model's marginal means, with
	// the model's df; families may be adjusted jointly (Dunnett, Tukey).
	Contrasts Pairing = iota
	// WelchTwoSample: Welch's two-sample t test of the two levels'
	// analysed values, Welch-Satterthwaite df, t interval.
	WelchTwoSample
	// RankSumShift: the Wilcoxon-Mann-Whitney rank-sum test with the
	// Hodges-Lehmann shift and its Moses interval.
	RankSumShift
	// SignedRankPaired: the Wilcoxon signed-rank test of the paired
	// differences within the step's within, with the Hodges-Lehmann
	// median of the Walsh averages.
	SignedRankPaired
	// StratifiedShift: van Elteren's stratified two-sample test within
	// the step's within, with the common Hodges-Lehmann shift.
	StratifiedShift
)

// Words says in words what a comparison under the pairing estimates and
// which interval it gives.
func (p Pairing) Words() string {
	switch p {
	case WelchTwoSample:
		return "differences of means with Welch t intervals"
	case RankSumShift:
		return "Hodges-Lehmann shifts with distribution-free intervals from the rank-sum test"
	case SignedRankPaired:
		return "Hodges-Lehmann medians of the paired differences with distribution-free intervals from the signed-rank test"
	case StratifiedShift:
		return "Hodges-Lehmann shifts common to the strata with intervals from van Elteren's test"
	}
	return "differences of marginal means with t intervals"
}

// Model is one model kind a step can name.
type Model struct {
	// Name is the plan's name of the model kind ("kruskal-wallis").
	Name string
	// Title is the name of the method as the trade writes it.
	Title string
	// Doc is one paragraph: what the step fits or tests, and its source.
	Doc string
	// Rules are the plan-language rules of a step of this kind.
	Rules plan.ModelRules
	// Pairing says how a step of this kind compares two levels.
	Pairing func(s *plan.Step) Pairing
	// Describe writes the sentence explain gives for a step of this
	// kind; y is the analysed quantity in words.
	Describe func(s *plan.Step, y string) string
}

// Registry lists every check and model kind of this build. It
// implements [plan.Methods].
type Registry struct {
	checks []*Check
	models []*Model
}

// NewRegistry makes a registry of the given methods. It panics on a
// duplicate or empty name or a value without its functions: the
// registry is built from the package's own values, so this is a build
// error, not a user's.
func NewRegistry(checks []*Check, models []*Model) *Registry {
	seen := map[string]bool{}
	for _, c := range checks {
		if c.Name == "" || c.Title == "" || c.Doc == "" || c.Words == "" || c.Run == nil || seen["check:"+c.Name] {
			panic(fmt.Sprintf("method: check %q is incomplete or registered twice", c.Name))
		}
		seen["check:"+c.Name] = true
	}
	for _, m := range models {
		if m.Name == "" || m.Title == "" || m.Doc == "" || m.Pairing == nil || m.Describe == nil || seen["model:"+m.Name] {
			panic(fmt.Sprintf("method: model %q is incomplete or registered twice", m.Name))
		}
		seen["model:"+m.Name] = true
	}
	return &Registry{checks: slices.Clone(checks), models: slices.Clone(models)}
}

// CheckNamed returns the check a plan names, or nil.
func (r *Registry) CheckNamed(name string) *Check {
	for _, c := range r.checks {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// ModelNamed returns the model kind a plan names, or nil.
func (r *Registry) ModelNamed(name string) *Model {
	for _, m := range r.models {
		if m.Name == name {
			return m
		}
	}
	return nil
}

// PairingOf returns how a step compares two levels: its model kind's
// pairing, or Contrasts for a kind the registry does not have.
func (r *Registry) PairingOf(s *plan.Step) Pairing {
	if m := r.ModelNamed(s.Model); m != nil {
		return m.Pairing(s)
	}
	return Contrasts
}

// AllChecks returns the checks in registry order.
func (r *Registry) AllChecks() []*Check { return slices.Clone(r.checks) }

// AllModels returns the model kinds in registry order.
func (r *Registry) AllModels() []*Model { return slices.Clone(r.models) }

// Model returns the rules of a model kind (plan.Methods).
func (r *Registry) Model(name string) (plan.ModelRules, bool) {
	if m := r.ModelNamed(name); m != nil {
		return m.Rules, true
	}
	return plan.ModelRules{}, false
}

// Check returns the rules of a check (plan.Methods).
func (r *Registry) Check(name string) (plan.CheckRules, bool) {
	if c := r.CheckNamed(name); c != nil {
		return c.Rules(), true
	}
	return plan.CheckRules{}, false
}

// Models names the model kinds in registry order (plan.Methods).
func (r *Registry) Models() []string {
	out := make([]string, len(r.models))
	for i, m := range r.models {
		out[i] = m.Name
	}
	return out
}

// Checks names the checks in registry order (plan.Methods).
func (r *Registry) Checks() []string {
	out := make([]string, len(r.checks))
	for i, c := range r.checks {
		out[i] = c.Name
	}
	return out
}
