package plan

import "strings"

// FormatVersion is the plan-format version this package reads. A plan
// declares it in its top-level "furrow" field.
const FormatVersion = 1

// Plan is a statistical analysis plan, version 1 of the furrow format.
// Every field that came from YAML keeps the position of its value in Pos
// fields, so that later checks (against the data, or during a run) can
// point at the plan line that allowed a decision.
type Plan struct {
	// Format is the value of the top-level "furrow" field (1).
	Format int
	// Path is the file the plan was read from, as given to Load.
	Path string

	Trial      Trial
	Data       DataSource
	Columns    []Column
	Design     Design
	Exclusions []Exclusion
	Endpoints  []Endpoint
	// Derived are the variables computed from the columns by declared
	// formulas (plan key "derived"; see derived.go).
	Derived []Derived

	// Pos is the position of the document root.
	Pos Pos

	// Where maps the data path of every value read from YAML (the form
	// of Diagnostic.Path: "endpoints[0].steps[1].on-fail") to the
	// position of that value. Use PosOf, which falls back to the closest
	// enclosing value for paths that were not written (defaults).
	Where map[string]Pos
}

// PosOf returns the position of the value at the data path, or of the
// closest enclosing value that was written in the plan, or the root
// position.
func (p *Plan) PosOf(path string) Pos {
	for {
		if pos, ok := p.Where[path]; ok {
			return pos
		}
		if path == "" {
			return p.Pos
		}
		i := max(strings.LastIndexByte(path, '.'), strings.LastIndexByte(path, '['))
		if i < 0 {
			path = ""
		} else {
			path = path[:i]
		}
	}
}

// Trial identifies the trial and the plan version.
type Trial struct {
	ID         string
	Title      string
	Sponsor    string
	Analyst    string
	Version    string // registered plan version, e.g. "1.0"
	Amendments []Amendment
	Pos        Pos
}

// Amendment records a change to the plan made before the data were seen.
type Amendment struct {
	Version string // plan version the amendment produced
	Date    string // ISO 8601 date, YYYY-MM-DD
	Reason  string
	Changes string
	Pos     Pos
}

// DataSource says where the final data are and how to read them.
type DataSource struct {
	File      string   // path relative to the plan file
	Format    string   // "csv" or "xlsx"
	Sheet     string   // xlsx only
	Delimiter string   // csv only; one character, default ","
	Decimal   string   // "." (default) or ","
	Missing   []string // cell texts that mean a missing value; default [""]
	Pos       Pos
}

// Column roles.
const (
	RoleResponse  = "response"  // a measured outcome, numeric
	RoleTreatment = "treatment" // the factor whose levels are compared
	RoleFactor    = "factor"    // any other fixed factor (e.g. variety, nitrogen)
	RoleUnit      = "unit"      // experimental-unit identifier
	RoleRepeat    = "repeat"    // repeated-measure factor (time, stage)
	RoleBlock     = "block"     // block (replicate) identifier
	RoleSite      = "site"      // site / environment identifier
	RoleCovariate = "covariate" // numeric covariate
	RoleLabel     = "label"     // carried along, never analysed
)

// Column declares one data column.
type Column struct {
	Name    string
	Role    string
	Label   string   // human description (optional)
	Unit    string   // measurement unit (responses, covariates)
	Min     *float64 // plausible range, inclusive (responses, covariates)
	Max     *float64
	Levels  []string // declared levels (treatment, factor, repeat, block, site); order is kept
	Control string   // reference (control) level of a treatment or factor
	Pos     Pos
}

// IsFactor reports whether the column is categorical (its values are levels).
func (c *Column) IsFactor() bool {
	switch c.Role {
	case RoleTreatment, RoleFactor, RoleUnit, RoleRepeat, RoleBlock, RoleSite:
		return true
	}
	return false
}

// IsNumeric reports whether the column's values must be numbers.
func (c *Column) IsNumeric() bool {
	return c.Role == RoleResponse || c.Role == RoleCovariate
}

// Design states the layout and replication the trial was planned with.
type Design struct {
	Layout     string // crd, rcbd, latin-square, factorial, split-plot, split-block, repeated, multi-site
	Replicates int    // experimental units per treatment combination (per site when there is a site column); 0 = not declared
	Subsamples int    // measurements per unit and time point; 0 or 1 = one
	// LeastUnits is what the plan accepts when units are lost (nil = not
	// declared; a plan that declares Replicates must declare it).
	LeastUnits *LeastUnits
	Pos        Pos
}

// What LeastUnits counts, and what happens below it.
const (
	LeastPerCell      = "cell"      // each treatment cell: the combination of treatment, factors (and site) Replicates counts
	LeastPerTreatment = "treatment" // each treatment level (per site), over the levels of the other factors
	BelowStop         = "stop"      // below the least count the run stops before any analysis
	BelowWarn         = "warn"      // below the least count the run goes on, with a warning
)

// LeastUnits declares, before the data are seen, how many experimental
// units the analysis accepts when some are lost (a plot flooded, an
// animal removed): a cell (or treatment) with fewer units than
// Replicates but at least Count is analysed as seen, with a warning that
// lists the lost units; below Count the run stops (Below = BelowStop) or
// goes on with a warning (BelowWarn). A unit is lost when the data hold
// no row of it, or when a declared exclusion removes every row of it.
type LeastUnits struct {
	Per   string // LeastPerCell or LeastPerTreatment
	Count int    // the least number of units per cell (or treatment), at least 1
	Below string // BelowStop or BelowWarn
	Pos   Pos
}

// Exclusion drop kinds and conditions.
const (
	DropUnit = "unit" // drop every row of the unit
	DropRow  = "row"  // drop the offending row only

	WhenMissing    = "missing"      // Column is missing (at level At of the repeat factor, when given)
	WhenListed     = "listed"       // the unit is in Units
	WhenOutOfRange = "out-of-range" // Column is outside its declared plausible range
)

// Exclusion is a rule, declared before the data were seen, that removes rows.
type Exclusion struct {
	ID     string
	Drop   string // DropUnit or DropRow
	When   string // WhenMissing, WhenListed or WhenOutOfRange
	Column string
	At     string   // level of the repeat factor (optional)
	Units  []string // for WhenListed
	Reason string
	Pos    Pos
}

// Endpoint is one response analysed by an ordered cascade of steps.
type Endpoint struct {
	ID       string
	Response string // name of a response column
	Primary  bool
	Alpha    float64 // default 0.05
	// NotComputable is what a check of this endpoint that cannot be
	// computed on the data counts as, where the check does not say
	// (NotComputableFail, NotComputablePass or NotComputableStop).
	NotComputable string
	Steps         []Step
	Hypotheses    []Hypothesis
	Pos           Pos
}

// Outcome derivations.
const (
	DeriveRaw      = "raw"       // the response as measured, every row
	DeriveChange   = "change"    // per unit: value at To minus value at From
	DeriveBaseline = "baseline"  // per unit: value at To, with the value at From as a covariate (ANCOVA)
	DeriveUnitMean = "unit-mean" // per unit (and time, if At is empty): mean of sub-samples
)

// Outcome says which values of the response a step analyses.
type Outcome struct {
	Derive string
	From   string // level of the repeat factor: baseline
	To     string // level of the repeat factor: end point
	At     string // unit-mean: restrict to this level of the repeat factor (optional)
	Pos    Pos
}

// Transform kinds, the fixed ladder.
const (
	TransformNone       = "none"
	TransformLog        = "log"
	TransformLogOffset  = "log-offset" // log(x + Offset)
	TransformLog10      = "log10"
	TransformSqrt       = "sqrt"
	TransformReciprocal = "reciprocal"
	TransformArcsine    = "arcsine-sqrt" // asin(sqrt(p)), p a proportion in [0, 1]
	TransformBoxCox     = "box-cox"      // fixed Lambda
)

// Transform is applied to the outcome before the model is fitted.
type Transform struct {
	Kind   string
	Offset float64 // log-offset
	Lambda float64 // box-cox
	// HasOffset and HasLambda record whether offset and lambda were
	// written (so that a stray one can be refused).
	HasOffset, HasLambda bool
	Pos                  Pos
}

// Term is a model term: one column name, or several for an interaction
// (fixed terms) or a nesting combination (random terms).
type Term struct {
	Columns []string
	Pos     Pos
}

// Degrees-of-freedom methods.
const (
	DFResidual      = "residual"
	DFSatterthwaite = "satterthwaite"
	DFKenwardRoger  = "kenward-roger"
)

// Check is an assumption check run on a fitted step.
type Check struct {
	Test      string   // a check of the build's registry (furrow/checker/method)
	By        []string // grouping columns for variance tests (default: the treatment column)
	FailBelow float64  // the check fails when its p-value is below this
	OnFail    string   // step to go to when this check fails (overrides the step's OnFail)
	// NotComputable is what the check counts as when it cannot be
	// computed on the data at hand (Shapiro-Wilk beyond 5000 residuals, a
	// variance test with one value in a group): NotComputableFail,
	// NotComputablePass or NotComputableStop. Filled from the endpoint.
	NotComputable string
	Pos           Pos
}

// What a check that cannot be computed counts as.
const (
	NotComputableFail = "fail" // as a failed check: its on-fail is taken
	NotComputablePass = "pass" // as a passed check
	NotComputableStop = "stop" // the endpoint stops: no step is reported
)

// Step is one analysis in an endpoint's cascade.
type Step struct {
	ID         string
	Model      string // a model kind of the build's registry (furrow/checker/method)
	Outcome    Outcome
	Transform  Transform
	Fixed      []Term
	Random     []Term
	Covariates []string // numeric covariates added as fixed terms
	Compare    string   // rank tests and welch: the factor compared
	Within     string   // friedman: blocks; van-elteren: strata
	Estimation string   // mixed: "reml" (default) or "ml"
	DF         string
	Anova      int // ANOVA type 1, 2 or 3 (default 3)
	Checks     []Check
	OnFail     string // step to go to when any check fails; empty = last resort
	// Answers say how this step answers hypotheses it cannot answer as
	// the hypothesis declares them (another adjustment or estimator), or
	// that it does not answer them.
	Answers []Answer
	Pos     Pos
}

// Answer is a step's declared way of answering one hypothesis of its
// endpoint, overriding the hypothesis's adjustment or estimator on this
// step, or omitting the hypothesis here with a reason.
type Answer struct {
	Hypothesis string // the hypothesis id
	Adjust     string // multiplicity adjustment on this step ("" = as declared)
	Estimate   string // estimator on this step ("" = as declared)
	Omit       string // the reason this step does not answer the hypothesis ("" = it does)
	Pos        Pos
}

// Estimators of a comparison.
const (
	// EstimateMeanDifference: the difference of (marginal) means on the
	// analysis scale, a ratio of back-transformed means on a log scale.
	EstimateMeanDifference = "mean-difference"
	// EstimateHodgesLehmann: the Hodges-Lehmann shift matching the rank
	// test (a ratio on a log scale).
	EstimateHodgesLehmann = "hodges-lehmann"
)

// Hypothesis kinds.
const (
	HypVersusControl  = "versus-control"
	HypPairwise       = "pairwise"
	HypEquivalence    = "equivalence"
	HypNonInferiority = "non-inferiority"
	HypTerm           = "term" // the F test of a model term
)

// Multiplicity adjustments.
const (
	AdjustNone       = "none"
	AdjustBonferroni = "bonferroni"
	AdjustHolm       = "holm"
	AdjustHochberg   = "hochberg"
	AdjustBH         = "benjamini-hochberg"
	AdjustSidak      = "sidak"      // single-step Šidák (1967)
	AdjustHolmSidak  = "holm-sidak" // step-down Šidák
	AdjustShaffer    = "shaffer"    // Shaffer's (1986) closed-test refinement of Holm for all pairs
	AdjustTukey      = "tukey"
	AdjustDunnett    = "dunnett"
)

// Margin is an equivalence or non-inferiority margin, either on the
// analysis scale (Lower/Upper differences) or as ratios for a log scale.
type Margin struct {
	Scale string  // "difference" or "ratio"
	Lower float64 // equivalence: both; non-inferiority: Lower only (Upper for lower-is-better)
	Upper float64
	// HasLower and HasUpper record whether each bound was written.
	HasLower, HasUpper bool
	Pos                Pos
}

// Hypothesis is a pre-declared question answered on the accepted step.
type Hypothesis struct {
	ID      string
	Kind    string
	Factor  string     // the factor whose levels are compared (default: the treatment column)
	Levels  []string   // versus-control: levels compared with the control (default all others)
	Pairs   [][]string // pairwise: chosen pairs (default all)
	Test    string     // equivalence / non-inferiority: the test level
	Against string     // equivalence / non-inferiority: the comparator level
	Term    []string   // term: the model term tested
	Margin  *Margin
	Sides   string  // "two-sided" (default), "greater", "less"
	Better  string  // non-inferiority: "higher" (default) or "lower"
	Alpha   float64 // filled with the endpoint's alpha when not written
	Adjust  string
	// Estimate is the estimator of a comparison (default
	// EstimateMeanDifference; empty for a term hypothesis).
	Estimate string
	Pos      Pos
}

// AnswerOn returns how step s answers hypothesis h: the hypothesis's
// adjustment and estimator, overridden by the step's declared answer for
// h, if any; Pos is that answer's position (zero when none is declared).
func AnswerOn(s *Step, h *Hypothesis) Answer {
	a := Answer{Hypothesis: h.ID, Adjust: h.Adjust, Estimate: h.Estimate}
	for _, o := range s.Answers {
		if o.Hypothesis != h.ID {
			continue
		}
		a.Pos, a.Omit = o.Pos, o.Omit
		if o.Adjust != "" {
			a.Adjust = o.Adjust
		}
		if o.Estimate != "" {
			a.Estimate = o.Estimate
		}
		break
	}
	return a
}
