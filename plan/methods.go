package plan

// Methods is what loading needs to know of the model kinds and checks a
// build offers: the plan-language rules of each, by the name a plan uses.
// The build's registry (package furrow/checker/method) is the one
// implementation; Load, Parse and Validate take it so that the rules live
// beside the code that runs each method, not in a second list here.
type Methods interface {
	// Model returns the rules of the model kind a step names.
	Model(name string) (ModelRules, bool)
	// Check returns the rules of the assumption check a step names.
	Check(name string) (CheckRules, bool)
	// Models names every model kind, in registry order.
	Models() []string
	// Checks names every assumption check, in registry order.
	Checks() []string
}

// Need says whether a step of a model kind must, may or must not declare
// a part of the step.
type Need int

// Need values.
const (
	Forbidden Need = iota // the part must not be written
	Required              // the part must be written
	Optional              // the part may be written
)

// ModelRules are the plan-language rules of one model kind: which parts
// of a step it takes, the defaults it fills, and what its answers allow.
type ModelRules struct {
	// Fixed says whether the step takes fixed terms and covariates.
	Fixed Need
	// Random says whether the step takes random terms.
	Random Need
	// Estimation lists the estimation methods the step may name; the
	// first is the default. Empty: estimation does not apply.
	Estimation []string
	// DF lists the degrees-of-freedom methods the step may name; the
	// first is the default. Empty: df does not apply.
	DF []string
	// Anova says whether the step takes an ANOVA type (default 3).
	Anova bool
	// Compare says whether the step names the factor it compares.
	// CompareOptionalPerUnit relaxes Required to Optional when the
	// outcome is one value per unit (change or baseline): a one-sample
	// test of the per-unit values.
	Compare                Need
	CompareOptionalPerUnit bool
	// CompareLevels is the number of levels the compared factor must
	// declare (0: any number).
	CompareLevels int
	// Within says whether the step names blocks or strata;
	// WithinWithCompare makes it Required when compare is written and
	// Forbidden otherwise.
	Within            Need
	WithinWithCompare bool
	// UnitWithin says that a within naming the experimental unit makes
	// the comparison one within each unit (no pseudo-replication).
	UnitWithin bool
	// UnitRandom says that a random term containing the experimental
	// unit accounts for repeated measurements of it.
	UnitRandom bool
	// Model says the step fits a model with fixed terms, whose terms
	// hypotheses may test and whose outcome may add a baseline covariate.
	Model bool
	// Ranks says the step is a rank test: checks declared on it test
	// deviations of no fitted model (lint warns).
	Ranks bool
	// Means says the step's comparisons are of (back-transformed) means,
	// so that a ratio margin needs a log scale.
	Means bool
	// Estimates lists the estimators the step's comparisons give
	// (EstimateMeanDifference, EstimateHodgesLehmann).
	Estimates []string
	// JointAdjust says the step's comparisons have a joint distribution
	// (a model's contrasts), so that dunnett and tukey apply.
	JointAdjust bool
}

// CheckRules are the plan-language rules of one assumption check.
type CheckRules struct {
	// Grouped says the check groups the residuals by the levels of its
	// by columns (default: the treatment column).
	Grouped bool
}
