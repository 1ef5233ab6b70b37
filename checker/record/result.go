package record

// This file holds the run result: the one structure the audit record
// (audit.json) is written from and the human report is rendered from.
// Field order here is the order of the JSON keys; every float goes through
// Num so that non-finite values survive the round trip.

// AuditFormat is the version of the audit-record format written by this
// package. It is the value of the record's top-level "format" field.
const AuditFormat = 1

// AuditFileName is the name of the audit record inside a run directory.
const AuditFileName = "audit.json"

// Result is the complete outcome of one furrow run: what was read, what was
// removed, every step that was executed with its evidence, the accepted
// step's results and the integrity block. It is written as audit.json and is
// the only input of the report renderers.
type Result struct {
	// Format is AuditFormat.
	Format int `json:"format"`
	// Tool identifies the program that produced the record.
	Tool ToolInfo `json:"tool"`
	// RunAt is the time of the run, when the data were analysed (RFC 3339,
	// UTC, from the clock the caller injects). It is the only field that
	// differs between two runs of the same plan on the same data (with
	// PlanLocation when the run directory is elsewhere). It is inside the
	// content hash (and signed): verify checks the registration and its
	// amendments against it, so it cannot be moved without showing, except
	// by recomputing the hash of an unsigned record, which anyone can do.
	RunAt string `json:"run_at"`
	// PlanLocation is where the plan file was, as a slash path relative to
	// the run directory, when the run was made. It is only a hint: verify
	// looks for the plan there unless told where it is (--plan), and every
	// other path of the record is relative to the plan's folder. It is left
	// out of the content hash, so that the hash does not depend on where the
	// run directory and the plan are, and verify does not compare it.
	PlanLocation string `json:"plan_location"`
	// Unregistered is true when the run was asked for without a matching
	// registration record. Every rendering of the record must show it.
	Unregistered bool `json:"unregistered"`
	// Trial repeats the plan's trial identification.
	Trial TrialInfo `json:"trial"`
	// Inputs fingerprints the plan, its registration and the data.
	Inputs Inputs `json:"inputs"`
	// Design is the design as seen in the data, before exclusions: units
	// per treatment cell and missing values per column.
	Design *DesignSeen `json:"design"`
	// PlanWarnings are the plan's lint warnings, carried into the run so
	// that the record shows what the analyst registered despite them.
	PlanWarnings []Finding `json:"plan_warnings"`
	// LostUnits lists the units the design declares that the analysis
	// does not have (no row in the data, or every row removed by a
	// declared exclusion), in cell order; empty when none is lost or the
	// plan declares no least-units.
	LostUnits []LostUnit `json:"lost_units"`
	// DataWarnings are the data-contract warnings carried into the run
	// (errors stop the run before a record is written).
	DataWarnings []Finding `json:"data_warnings"`
	// Exclusions lists every row removed by a declared exclusion rule.
	Exclusions []ExcludedRow `json:"exclusions"`
	// ExclusionRules summarises each declared rule and how many rows it removed.
	ExclusionRules []ExclusionRule `json:"exclusion_rules"`
	// Endpoints holds one entry per declared endpoint, in plan order.
	Endpoints []EndpointResult `json:"endpoints"`
	// PlanPaths maps every plan position the record holds (the pos of an
	// endpoint, step, check, hypothesis, exclusion rule or data warning, a
	// decision's rule, a hypothesis's answer; "plan.yaml:77:13") to the
	// plan data path of the value written there
	// ("endpoints[0].steps[0].checks[0]"). Verify compares positions by
	// these paths, so that an edit or amendment that only moves lines is
	// not a difference; the record keeps them because the plan as it was
	// run is not kept, so its positions could not be re-derived later.
	PlanPaths map[string]string `json:"plan_paths"`
	// Files lists every file the run wrote into its folder beside the
	// record (report.html, report.md, each table), by slash path inside
	// the folder, with the SHA-256 of its bytes, sorted by path. It is
	// inside the content hash, so verify can hold the whole folder to the
	// record (see the package documentation, "Run folder"); empty for a
	// record written alone.
	Files []FileHash `json:"files"`
	// Integrity is the content hash and optional signature.
	Integrity Integrity `json:"integrity"`
}

// FileHash is one file of a run folder and the hash of its bytes.
type FileHash struct {
	// Path is the file's slash path inside the run folder ("tables/checks.csv").
	Path string `json:"path"`
	// SHA256 is "sha256:<hex>" of the file's bytes.
	SHA256 string `json:"sha256"`
}

// ToolInfo identifies the program that wrote a record. Both values are
// injected by the caller (the command line fills them from the build
// information) so that tests and hashed content are reproducible.
type ToolInfo struct {
	// Name is "furrow".
	Name string `json:"name"`
	// Version is the tool's version string, e.g. "v0.3.0" or "(devel)".
	Version string `json:"version"`
	// Build describes the build: Go version and VCS revision when known.
	Build string `json:"build"`
}

// TrialInfo repeats the plan's identification of the trial.
type TrialInfo struct {
	ID          string `json:"id"`
	Title       string `json:"title"`
	PlanVersion string `json:"plan_version"`
}

// Inputs fingerprints everything the run read.
type Inputs struct {
	// PlanPath is the plan file's name. Every path in Inputs is a slash
	// path relative to the plan's folder, so that the content hash does not
	// depend on where the plan or the run directory is (see
	// Result.PlanLocation for where the plan was).
	PlanPath string `json:"plan_path"`
	// PlanFileSHA256 is "sha256:<hex>" of the plan file's bytes.
	PlanFileSHA256 string `json:"plan_file_sha256"`
	// PlanHash is plan.Hash of the plan: the hash of its canonical form,
	// which ignores comments and formatting.
	PlanHash string `json:"plan_hash"`
	// Registration is the registration record the run was checked against;
	// nil for an unregistered run without any record.
	Registration *RegistrationRef `json:"registration"`
	// DataPath is the data file analysed, relative to the plan's folder.
	DataPath string `json:"data_path"`
	// DataDeclared is the plan's data.file, relative to the plan's folder
	// and cleaned the same way: DataPath differs from it when the run was
	// given another data file (see DataAsDeclared).
	DataDeclared string `json:"data_declared"`
	// DataFileSHA256 is "sha256:<hex>" of the data file's bytes.
	DataFileSHA256 string `json:"data_file_sha256"`
	// TableHash is "sha256:<hex>" of the table as read (see TableHash).
	TableHash string `json:"table_hash"`
	// Rows is the number of data rows read (header excluded).
	Rows int `json:"rows"`
	// Columns are the column names of the table, in file order.
	Columns []string `json:"columns"`
	// RowsKept is Rows minus the rows removed by exclusions. The rows
	// each step used are in StepResult.Rows, those of the reported step in
	// EndpointResult.RowsAnalysed.
	RowsKept int `json:"rows_kept"`
}

// DataAsDeclared reports whether the file analysed is the plan's
// data.file (both paths are cleaned and relative to the plan's folder).
func (in *Inputs) DataAsDeclared() bool { return in.DataPath == in.DataDeclared }

// RegistrationRef points at the registration record of the plan.
type RegistrationRef struct {
	// Path is the registration record, relative to the plan's folder.
	Path string `json:"path"`
	// FileSHA256 is "sha256:<hex>" of the record file's bytes.
	FileSHA256 string `json:"file_sha256"`
	// Head is the entry hash of the last entry of the chain.
	Head string `json:"head"`
	// Matches is true when the last entry registers the plan that was run.
	Matches bool `json:"matches"`
	// Chain is the amendment chain, oldest first.
	Chain []ChainLink `json:"chain"`
}

// ChainLink is a summary of one registration entry as it appears in a
// run's record.
type ChainLink struct {
	Seq          int    `json:"seq"`
	PlanVersion  string `json:"plan_version"`
	PlanHash     string `json:"plan_hash"`
	RegisteredAt string `json:"registered_at"`
	Reason       string `json:"reason"`
	Previous     string `json:"previous"`
	EntryHash    string `json:"entry_hash"`
}

// Finding is a diagnostic as written into the record.
type Finding struct {
	Severity string `json:"severity"`
	Code     string `json:"code"`
	Pos      string `json:"pos"`
	Summary  string `json:"summary"`
}

// ExcludedRow is one data row removed by an exclusion rule.
type ExcludedRow struct {
	// Row is the row number a user sees in the file (header = row 1).
	Row int `json:"row"`
	// Unit is the experimental unit of the row (empty when the plan has no unit column).
	Unit string `json:"unit"`
	// Rule is the id of the exclusion rule that removed the row.
	Rule string `json:"rule"`
	// RulePos is the plan position of the rule (file:line:col).
	RulePos string `json:"rule_pos"`
}

// ExclusionRule summarises one declared exclusion rule.
type ExclusionRule struct {
	ID          string   `json:"id"`
	Pos         string   `json:"pos"`
	Drop        string   `json:"drop"`
	When        string   `json:"when"`
	Reason      string   `json:"reason"`
	RowsRemoved int      `json:"rows_removed"`
	Units       []string `json:"units"`
}

// EndpointStatus is the overall outcome of an endpoint's cascade.
type EndpointStatus int

// Endpoint statuses.
const (
	// EndpointAccepted: a step's checks all passed and its results are reported.
	EndpointAccepted EndpointStatus = iota
	// EndpointAssumptionsUnmet: the last step of the cascade was reached and
	// its checks failed; its results are reported with that warning.
	EndpointAssumptionsUnmet
	// EndpointFailed: no step could produce results (every reached step failed to fit).
	EndpointFailed
	// EndpointStopped: a check that could not be computed stopped the
	// analysis, as its not-computable declares; no step is reported.
	EndpointStopped
)

// EndpointResult is the record of one endpoint's cascade.
type EndpointResult struct {
	ID       string `json:"id"`
	Pos      string `json:"pos"`
	Response string `json:"response"`
	Primary  bool   `json:"primary"`
	Alpha    Num    `json:"alpha"`
	// Status says how the cascade ended.
	Status EndpointStatus `json:"status"`
	// Reported is the id of the step whose results are reported (the
	// accepted step, or the last-resort step whose assumptions were unmet);
	// empty when Status is EndpointFailed.
	Reported string `json:"reported"`
	// RowsAnalysed is the number of data rows the reported step used (its
	// StepResult.Rows): rows analysed plus that step's unused rows is
	// Inputs.Rows. 0 when no step is reported.
	RowsAnalysed int `json:"rows_analysed"`
	// Steps are all declared steps in plan order; steps that were not
	// reached carry the decision ReasonNotReached.
	Steps []StepResult `json:"steps"`
	// Hypotheses are computed on the reported step, in plan order.
	Hypotheses []HypothesisResult `json:"hypotheses"`
	// Observed is the data behind the report's data-level figures.
	Observed *ObservedData `json:"observed"`
}

// StepResult is one step of a cascade: its model, what was fitted, the
// checks and the decision.
type StepResult struct {
	ID  string `json:"id"`
	Pos string `json:"pos"`
	// Executed is false for a step the cascade did not reach.
	Executed bool      `json:"executed"`
	Model    ModelSpec `json:"model"`
	// N is the number of observations the step's model (or global test)
	// used: data rows for a raw outcome; units for change and baseline
	// outcomes (one observation per unit, from its rows at from and to);
	// units (or unit and time) for unit-mean, one mean per unit of its
	// sub-samples. Friedman and paired signed-rank tests leave out the
	// blocks that lack a level of the compared factor (their comparisons,
	// stratified two-sample tests, use every observation of the two
	// levels). Zero when the step was not reached or not fitted.
	N int `json:"n"`
	// Rows is the number of data rows behind those N observations: N for
	// a raw outcome, two per unit for change and baseline, the rows
	// averaged for unit-mean (a row averaged into a unit mean is used).
	// Rows plus len(Unused) is Inputs.Rows, the rows read.
	Rows int `json:"rows"`
	// Unused lists, in file order, every row read that the step did not
	// use, with the reason (UnusedExcluded ... UnusedIncompleteBlock);
	// empty when the step was not reached or not fitted.
	Unused []UnusedRow `json:"unused"`
	// Fit is the fit summary; nil when the step was not reached or failed to fit.
	Fit *FitSummary `json:"fit"`
	// Error is the fit error when the model could not be fitted.
	Error string `json:"error"`
	// Checks are the declared checks in plan order.
	Checks []CheckResult `json:"checks"`
	// Decision is what the engine did after this step and why.
	Decision Decision `json:"decision"`
	// Results are the full results; present only on the reported step.
	Results *StepDetail `json:"results"`
	// Figures is the data behind the diagnostic figures; present only on
	// executed steps that were fitted.
	Figures *DiagnosticData `json:"figures"`
}

// Why a data row was not used by a step (UnusedRow.Reason).
const (
	// UnusedExcluded: a declared exclusion rule (Rule) removed the row.
	UnusedExcluded = "excluded"
	// UnusedMissingResponse: the row's response is missing.
	UnusedMissingResponse = "missing-response"
	// UnusedMissingCovariate: a covariate of the step (Column) is missing
	// in the row (for change and baseline outcomes, in the unit's row at to).
	UnusedMissingCovariate = "missing-covariate"
	// UnusedMissingUnit: a per-unit outcome (change, baseline, unit-mean)
	// and the row names no unit (Column: the unit column).
	UnusedMissingUnit = "missing-unit"
	// UnusedNoSecondTime: a change or baseline outcome and the row's unit
	// has no value at the other time point (Column: the repeat column).
	UnusedNoSecondTime = "no-second-time"
	// UnusedOtherTime: the row is at a level of the repeat factor
	// (Column) the outcome does not use (not from or to; not at).
	UnusedOtherTime = "other-time"
	// UnusedIncompleteBlock: a friedman or paired signed-rank test left
	// out the row's block (Column: the within column), which lacks a level
	// of the compared factor.
	UnusedIncompleteBlock = "incomplete-block"
)

// UnusedRow is one data row a step did not use.
type UnusedRow struct {
	// Row is the row number a user sees in the file (header = row 1).
	Row int `json:"row"`
	// Unit is the row's experimental unit ("" when the plan has no unit
	// column or the row names none).
	Unit string `json:"unit"`
	// Reason is one of the Unused... codes.
	Reason string `json:"reason"`
	// Rule is the exclusion rule (UnusedExcluded); "" otherwise.
	Rule string `json:"rule"`
	// Column is the column the reason concerns (the covariate, the unit,
	// the repeat or the within column); "" otherwise.
	Column string `json:"column"`
}

// ModelSpec is the model of a step, as text and structured.
type ModelSpec struct {
	// Text is a one-line description, e.g.
	// "mixed (REML) of log(juveniles + 1); fixed: site, treatment, time, treatment × time; random: block within site, plot; satterthwaite df; type III tests".
	Text string `json:"text"`
	// Equation writes a linear or mixed step's model in furrow's notation:
	// the analysed quantity = intercept + each fixed term (× for
	// interactions, slope·x for a covariate) + random(term) for each
	// random term + residual. Empty for rank and Welch steps.
	Equation   string     `json:"equation"`
	Kind       string     `json:"kind"`
	Derive     string     `json:"derive"`
	From       string     `json:"from"`
	To         string     `json:"to"`
	At         string     `json:"at"`
	Transform  string     `json:"transform"`
	Offset     Num        `json:"offset"`
	Lambda     Num        `json:"lambda"`
	Fixed      [][]string `json:"fixed"`
	Random     [][]string `json:"random"`
	Covariates []string   `json:"covariates"`
	Compare    string     `json:"compare"`
	Within     string     `json:"within"`
	Estimation string     `json:"estimation"`
	DF         string     `json:"df"`
	Anova      int        `json:"anova"`
}

// FitSummary summarises a fitted model. Fields that do not apply to a
// model kind are zero (Sigma of a rank test, REMLCriterion of OLS).
type FitSummary struct {
	// Method names the estimator: "ols", "reml", "ml", "welch", or the rank test.
	Method string `json:"method"`
	// Params is the number of estimable fixed-effect parameters (the rank).
	Params int `json:"params"`
	// Aliased names the model columns dropped as linearly dependent.
	Aliased []string `json:"aliased"`
	// ResidualDF is the residual degrees of freedom (OLS).
	ResidualDF Num `json:"residual_df"`
	// Sigma is the residual standard deviation.
	Sigma Num `json:"sigma"`
	// RSquared is the coefficient of determination (OLS).
	RSquared Num `json:"r_squared"`
	// Criterion is -2 log-likelihood at the optimum (REML or ML), mixed models.
	Criterion Num `json:"criterion"`
	// Converged reports the optimiser's status for iterative fits.
	Converged bool `json:"converged"`
}

// Verdict is the outcome of one assumption check.
type Verdict int

// Check verdicts.
const (
	// VerdictPass: p >= threshold.
	VerdictPass Verdict = iota
	// VerdictFail: p < threshold.
	VerdictFail
	// VerdictError: the check could not be computed; it counts as a failure
	// (the plan's fallback is followed) and the error is recorded.
	VerdictError
	// VerdictNotRun: the step was not reached.
	VerdictNotRun
)

// CheckResult is one declared check on a fitted step.
type CheckResult struct {
	Test string   `json:"test"`
	Pos  string   `json:"pos"`
	By   []string `json:"by"`
	// On says what the check was applied to: "residuals" (normality) or
	// "residuals by group" (variance tests), or "residuals vs fitted".
	On        string  `json:"on"`
	N         int     `json:"n"`
	Statistic Num     `json:"statistic"`
	DF        []Num   `json:"df"`
	P         Num     `json:"p"`
	FailBelow Num     `json:"fail_below"`
	Verdict   Verdict `json:"verdict"`
	// OnFail is the step the check sends the cascade to when it fails
	// (the check's own on-fail, else the step's; empty = last resort).
	OnFail string `json:"on_fail"`
	// NotComputable is what the plan declares the check counts as when it
	// cannot be computed ("fail", "pass" or "stop"); it applies when
	// Verdict is "error".
	NotComputable string `json:"not_computable"`
	Error         string `json:"error"`
}

// Action is what the engine did after a step.
type Action int

// Actions.
const (
	// ActionAccept: the step's results are reported.
	ActionAccept Action = iota
	// ActionFallBack: the cascade moved to the step named in Decision.Next.
	ActionFallBack
	// ActionReportUnmet: last resort; results reported with assumptions unmet.
	ActionReportUnmet
	// ActionStop: nothing further could be done (last step failed to fit).
	ActionStop
	// ActionSkip: the step was not reached.
	ActionSkip
)

// Reason says why a decision was taken.
type Reason int

// Decision reasons.
const (
	// ReasonChecksPassed: every declared check passed.
	ReasonChecksPassed Reason = iota
	// ReasonNoChecks: the step declares no checks and is accepted as fitted.
	ReasonNoChecks
	// ReasonCheckFailed: a check's p-value fell below its threshold (or the
	// check could not be computed) and the plan names a next step.
	ReasonCheckFailed
	// ReasonFitFailed: the model could not be fitted and the plan names a
	// next step (the step's on-fail).
	ReasonFitFailed
	// ReasonLastResortAssumptionsUnmet: a check failed on a step without a
	// next step; its results are reported with that warning.
	ReasonLastResortAssumptionsUnmet
	// ReasonLastResortFitFailed: the last step could not be fitted.
	ReasonLastResortFitFailed
	// ReasonNotReached: an earlier step was accepted or the cascade did not
	// lead here.
	ReasonNotReached
	// ReasonCheckNotComputable: a check could not be computed on the data
	// and its not-computable declares that this stops the endpoint.
	ReasonCheckNotComputable
)

// Decision is the engine's decision after a step, with the plan rule that
// caused it.
type Decision struct {
	Action Action `json:"action"`
	Reason Reason `json:"reason"`
	// Next is the step the cascade moved to (ActionFallBack only).
	Next string `json:"next"`
	// Rule is the plan position (file:line:col) of the rule that caused the
	// decision: the failing check, or the step itself for accept and
	// last-resort decisions.
	Rule string `json:"rule"`
	// Detail is one plain sentence explaining the decision.
	Detail string `json:"detail"`
}

// StepDetail holds the full results of the reported step.
type StepDetail struct {
	// Scale describes the analysis scale, e.g. "log(juveniles + 1)".
	Scale string `json:"scale"`
	// Coefficients are the fixed-effect estimates (linear and mixed models).
	Coefficients []Coefficient `json:"coefficients"`
	// Anova is the ANOVA table (type in each row).
	Anova []AnovaRow `json:"anova"`
	// VarianceComponents are the random-effect variances and the residual,
	// each with its share of the total (mixed models).
	VarianceComponents []VarComp `json:"variance_components"`
	// MarginalMeans are estimated marginal means of the compared factor,
	// with MeansLevel-confidence intervals (1 - the endpoint's alpha),
	// averaged with equal weights over the factors in MeansOver and with
	// each covariate held at the value in MeansAt.
	MarginalMeans []MarginalMean     `json:"marginal_means"`
	MeansLevel    Num                `json:"means_level"`
	MeansOver     []string           `json:"means_over"`
	MeansAt       []CovariateSetting `json:"means_at"`
	// Test is the global test of rank and Welch steps.
	Test *GlobalTest `json:"test"`
	// GroupSummaries are per-level descriptive statistics on the analysis scale.
	GroupSummaries []GroupSummary `json:"group_summaries"`
}

// CovariateSetting is the value a covariate is held at for marginal means.
type CovariateSetting struct {
	Name  string `json:"name"`
	Value Num    `json:"value"`
}

// Coefficient is one fixed-effect estimate.
type Coefficient struct {
	Name     string `json:"name"`
	Estimate Num    `json:"estimate"`
	SE       Num    `json:"se"`
	DF       Num    `json:"df"`
	T        Num    `json:"t"`
	P        Num    `json:"p"`
}

// AnovaRow is one row of an ANOVA table. SS and MS are zero for mixed
// models' F tests, where DenDF carries the denominator df.
type AnovaRow struct {
	Term  string `json:"term"`
	Type  int    `json:"type"`
	DF    Num    `json:"df"`
	SS    Num    `json:"ss"`
	MS    Num    `json:"ms"`
	F     Num    `json:"f"`
	DenDF Num    `json:"den_df"`
	P     Num    `json:"p"`
}

// VarComp is one variance component.
type VarComp struct {
	Group    string `json:"group"`
	Variance Num    `json:"variance"`
	SD       Num    `json:"sd"`
	// Share is Variance divided by the sum of all components (intraclass share).
	Share Num `json:"share"`
	// Boundary is true when the estimate sits at zero (a boundary fit).
	Boundary bool `json:"boundary"`
}

// MarginalMean is an estimated marginal mean with its CI, on the analysis
// scale and back-transformed to the response scale.
type MarginalMean struct {
	Factor   string `json:"factor"`
	Level    string `json:"level"`
	Estimate Num    `json:"estimate"`
	SE       Num    `json:"se"`
	DF       Num    `json:"df"`
	Lower    Num    `json:"lower"`
	Upper    Num    `json:"upper"`
	// Response-scale values (equal to the above when there is no transform);
	// for log transforms these are geometric means.
	Response      Num `json:"response"`
	ResponseLower Num `json:"response_lower"`
	ResponseUpper Num `json:"response_upper"`
}

// GlobalTest is the omnibus test of a rank or Welch step.
type GlobalTest struct {
	Method    string `json:"method"`
	Statistic Num    `json:"statistic"`
	DF        []Num  `json:"df"`
	P         Num    `json:"p"`
}

// GroupSummary describes one level of the compared factor.
type GroupSummary struct {
	Level  string `json:"level"`
	N      int    `json:"n"`
	Mean   Num    `json:"mean"`
	Median Num    `json:"median"`
	SD     Num    `json:"sd"`
}

// HypothesisResult is one declared hypothesis answered on the reported step.
type HypothesisResult struct {
	ID   string `json:"id"`
	Pos  string `json:"pos"`
	Kind string `json:"kind"`
	// Step is the step the hypothesis was computed on.
	Step  string `json:"step"`
	Sides string `json:"sides"`
	Alpha Num    `json:"alpha"`
	// Adjust is the multiplicity adjustment the hypothesis declares;
	// AdjustUsed the one applied on Step, which differs only where the
	// step's declared answer (Answer) gives another. Estimator is the
	// estimator of the comparisons on Step ("mean-difference",
	// "hodges-lehmann"; empty for a term hypothesis).
	Adjust     string `json:"adjust"`
	AdjustUsed string `json:"adjust_used"`
	Estimator  string `json:"estimator"`
	// Answer is the plan position of the step's declared answer for this
	// hypothesis, empty when the hypothesis's own declaration applies.
	Answer string `json:"answer"`
	// Level is the confidence level of the comparisons' intervals (1 -
	// alpha; 1 - 2 alpha for equivalence and non-inferiority), and
	// Intervals says whether they are "simultaneous" (Dunnett, Tukey,
	// Bonferroni) or "per-comparison" (not adjusted for multiplicity).
	Level     Num    `json:"level"`
	Intervals string `json:"intervals"`
	// Margin is the declared equivalence or non-inferiority margin as
	// written (scale "difference" or "ratio"); nil for other kinds.
	Margin *MarginSpec `json:"margin"`
	// Assessable is false when the hypothesis cannot be answered on the
	// reported step (equivalence under a rank step); Note says why.
	Assessable  bool         `json:"assessable"`
	Note        string       `json:"note"`
	Comparisons []Comparison `json:"comparisons"`
	// TermTest is the F test of a "term" hypothesis.
	TermTest *AnovaRow `json:"term_test"`
}

// MarginSpec is a margin as the plan declares it.
type MarginSpec struct {
	Scale string `json:"scale"`
	Lower Num    `json:"lower"`
	Upper Num    `json:"upper"`
}

// Comparison is one contrast or pairwise test within a hypothesis.
type Comparison struct {
	// Label is "<level> - <against>" on the analysis scale.
	Label   string `json:"label"`
	Level   string `json:"level"`
	Against string `json:"against"`
	// Estimate, SE, DF, Statistic: the contrast on the analysis scale (for
	// rank comparisons Estimate is the Hodges-Lehmann shift and Statistic
	// the normal score).
	Estimate  Num `json:"estimate"`
	SE        Num `json:"se"`
	DF        Num `json:"df"`
	Statistic Num `json:"statistic"`
	// P is the unadjusted p-value, PAdjusted after the multiplicity adjustment.
	P         Num `json:"p"`
	PAdjusted Num `json:"p_adjusted"`
	// Lower, Upper: the confidence interval matching the test (two-sided
	// 1-alpha, or 1-2 alpha for equivalence and non-inferiority).
	Lower Num `json:"lower"`
	Upper Num `json:"upper"`
	// Ratio, RatioLower, RatioUpper: back-transformed contrast for log
	// scales (ratio of geometric means); zero otherwise.
	Ratio      Num `json:"ratio"`
	RatioLower Num `json:"ratio_lower"`
	RatioUpper Num `json:"ratio_upper"`
	// N and NAgainst are the numbers of analysed values of Level and of
	// Against on the reported step.
	N        int `json:"n"`
	NAgainst int `json:"n_against"`
	// Reject is true when the (adjusted) p-value is below alpha.
	Reject bool `json:"reject"`
	// Equivalence is set for equivalence and non-inferiority hypotheses.
	Equivalence *EquivalenceResult `json:"equivalence"`
}

// EquivalenceResult is the outcome of two one-sided tests (Schuirmann 1987).
type EquivalenceResult struct {
	// Margins on the analysis scale (log of a ratio margin on a log scale).
	Lower Num `json:"lower"`
	Upper Num `json:"upper"`
	// PLower, PUpper: p-values of the one-sided tests against each margin
	// (non-inferiority uses one of them); TLower, TUpper their statistics
	// (t, or the normal score of a rank test). The comparison's Statistic
	// and P are those of the test that decides (the larger p for
	// equivalence).
	PLower Num `json:"p_lower"`
	PUpper Num `json:"p_upper"`
	TLower Num `json:"t_lower"`
	TUpper Num `json:"t_upper"`
	// Verdict is "equivalent", "non-inferior", "not shown".
	Verdict string `json:"verdict"`
}

// DiagnosticData is the data behind a step's diagnostic figures. The report
// decides what to draw.
type DiagnosticData struct {
	// Fitted and Residuals are per observation, in analysis order.
	Fitted    []Num `json:"fitted"`
	Residuals []Num `json:"residuals"`
	// Groups is the level of the compared factor per observation.
	Groups []string `json:"groups"`
	// Units is the experimental unit per observation (empty when none).
	Units []string `json:"units"`
	// Values is the analysed outcome per observation (after derivation and transform).
	Values []Num `json:"values"`
}

// Integrity is the tamper-evidence block of a record.
type Integrity struct {
	// ContentHash is "sha256:<hex>" of the canonical content (see the
	// package documentation, "Content hash").
	ContentHash string `json:"content_hash"`
	// Signature is the optional ed25519 signature of the content hash.
	Signature *Signature `json:"signature"`
}

// Signature is an ed25519 signature over the content-hash string.
type Signature struct {
	Algorithm string `json:"algorithm"`
	// PublicKey is the signer's public key in furrow's key format.
	PublicKey string `json:"public_key"`
	// Value is the base64 (standard, padded) signature.
	Value string `json:"value"`
}

// DesignSeen is the record's copy of the data contract's design summary.
type DesignSeen struct {
	// Rows and Units count the data rows and distinct units read.
	Rows  int `json:"rows"`
	Units int `json:"units"`
	// UnitColumn is the unit column ("" when the plan has none).
	UnitColumn string `json:"unit_column"`
	// CellColumns make a treatment cell (site first when there is one).
	CellColumns []string `json:"cell_columns"`
	// Replicates is design.replicates (0 when not declared).
	Replicates int `json:"replicates"`
	// LeastUnits is design.least-units (nil when not declared).
	LeastUnits *LeastUnitsSeen `json:"least_units"`
	// Cells are the units per combination of the cell columns' levels.
	Cells []CellSeen `json:"cells"`
	// Missing counts missing values per declared column that has any.
	Missing []MissingSeen `json:"missing"`
}

// LeastUnitsSeen is the plan's rule for lost units, as declared.
type LeastUnitsSeen struct {
	// Per is "cell" or "treatment".
	Per string `json:"per"`
	// Count is the least number of units per cell (or treatment level).
	Count int `json:"count"`
	// Below is "stop" or "warn".
	Below string `json:"below"`
	// Pos is the plan position of the declaration (file:line:col).
	Pos string `json:"pos"`
}

// LostUnit is one experimental unit the design declares that the
// analysis does not have.
type LostUnit struct {
	// Cell is the unit's level of each DesignSeen.CellColumns entry (site
	// first when there is one, then treatment and factors).
	Cell []string `json:"cell"`
	// Block is the unit's block: for a unit with no row in the data, the
	// block that lacks a unit of the cell, when the blocks tell; "" when
	// they do not or the plan has no block column.
	Block string `json:"block"`
	// Unit is the unit's identifier; "" for a unit with no row in the
	// data (its identifier is not known).
	Unit string `json:"unit"`
	// Rule is the exclusion rule that removed the unit's rows (the rule of
	// its first removed row); "" for a unit with no row in the data.
	Rule string `json:"rule"`
}

// CellSeen is the number of units in one treatment cell.
type CellSeen struct {
	Levels []string `json:"levels"`
	Units  int      `json:"units"`
}

// MissingSeen is the number of missing values in one column.
type MissingSeen struct {
	Column  string `json:"column"`
	Missing int    `json:"missing"`
}
