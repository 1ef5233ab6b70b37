package simulate

// Simulation of a plan's cascade before the data arrive.
//
// A normality pre-test that switches between a parametric and a rank
// analysis changes the error rates of the whole procedure (Rochon, Gondan &
// Kieser 2012, BMC Medical Research Methodology 12:81), so the operating
// characteristics of a declared cascade are only known by running it on
// data of known truth. Simulate makes such data from the plan's declared
// design and runs exactly the engine Run uses on each data set.

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"

	"furrow/checker/contract"
	"furrow/checker/engine"
	"furrow/checker/record"
	"furrow/checker/table"
	"furrow/plan"
)

// Error shapes of the simulated residuals. Each is scaled to mean zero and
// the residual standard deviation of SimOptions.
const (
	// SimNormal: Gaussian errors.
	SimNormal = "normal"
	// SimLognormal: a centred lognormal, exp(Z) - exp(1/2) rescaled; strongly
	// right-skewed (skewness about 6.2).
	SimLognormal = "lognormal"
	// SimContaminated: Tukey's contaminated normal, N(0, 1) with probability
	// 0.9 and N(0, 9) with probability 0.1 (Tukey 1960, "A survey of sampling
	// from contaminated distributions", in Contributions to Probability and
	// Statistics, Stanford University Press).
	SimContaminated = "contaminated"
	// SimT3: Student's t with 3 degrees of freedom (heavy tails, finite variance).
	SimT3 = "t3"
)

// SimErrorShapes lists the accepted values of SimOptions.Errors.
var SimErrorShapes = []string{SimNormal, SimLognormal, SimContaminated, SimT3}

// Generating scales (SimOptions.Scale).
const (
	SimScaleIdentity = "identity" // response = linear predictor + error
	SimScaleLog      = "log"      // response = exp(linear predictor + error)
)

// DefaultSimRuns is the number of simulated data sets when SimOptions.Runs is 0.
const DefaultSimRuns = 200

// SimOptions are the inputs of Simulate. Zero values select the documented
// defaults; pointer fields distinguish "not given" from zero.
//
// # The generating model
//
// For every response column the value of observation (site s, block b
// within s, unit u, repeat level r, sub-sample k) is, on the generating
// scale,
//
//	eta = Mean + a_s + b_sb + u_u + sum_g w_g + delta(treatment of u, r) + e
//
// with a_s ~ N(0, SiteSD^2), b_sb ~ N(0, BlockSD^2), u_u ~ N(0, UnitSD^2),
// and one w_g ~ N(0, GroupSD^2) per group of each further random term the
// plan's steps declare (a term of several columns beyond block within site,
// such as the whole plot block x irrigation of a split-plot), independent,
// and e drawn from the Errors shape with standard deviation
// ResidualSD. On the identity scale the response is eta, on the log scale
// exp(eta). delta is Effects[level] (0 for levels not named) at every
// level of the repeat factor except its first, which is taken as the
// pre-application baseline; without a repeat factor it applies to every
// row. An error that would put the response outside the column's declared
// min/max range is drawn again (up to 100 times, then the value is held at
// the bound), so the errors are truncated to the declared range.
//
// Defaults, per response column:
//   - Scale: log when the column declares min >= 0 and some step of an
//     endpoint on it uses a log, log-offset or log10 transform; else identity.
//   - Mean on the identity scale: the middle of [min, max] when both are
//     declared, min + 10 * ResidualSD or max - 10 * ResidualSD when one is,
//     else 0. On the log scale: log(sqrt(min * max)) when min > 0 and max
//     are declared, log(max / 100) when only max is (or min is 0), else
//     log(100).
//   - ResidualSD: (max - min) / 20 on the identity scale when both bounds
//     are declared, else 1; 0.4 on the log scale.
//   - SiteSD = ResidualSD when there is a site column, BlockSD = 0.5 *
//     ResidualSD when there is a block column, UnitSD = 0.5 * ResidualSD
//     when a unit has more than one row (repeat levels or sub-samples),
//     GroupSD = 0.5 * ResidualSD when there are further random terms;
//     each is 0 otherwise (an explicit value is used as given).
//
// # The simulated layout
//
// Every combination of the declared levels of the treatment and factor
// columns gets design.replicates units (1 when not declared) at every
// level of the site column. Replicate j of cell i is placed in level
// (j + k*i) mod B of the k-th block column (B its number of levels), so one
// block column gives complete blocks and two give a Latin square when
// replicates equals the number of treatments. Unit ids are u0001, u0002...
// unique over the data set. Each unit has one row per level of the repeat
// column and design.subsamples rows per level. Covariates are drawn
// uniformly in their declared range (standard normal without one); label
// columns hold "sim". Columns without declared levels (other than the unit)
// cannot be simulated and are an error.
type SimOptions struct {
	// Runs is the number of simulated data sets (DefaultSimRuns when 0).
	Runs int
	// Seed seeds the generator; data set i uses its own PCG stream
	// (Seed, i), so results do not depend on Workers.
	Seed uint64
	// Errors is one of SimErrorShapes ("" = normal).
	Errors string
	// Effects maps levels of the treatment column to the shift added to
	// their units on the generating scale (a log ratio on the log scale).
	// Empty: the null hypothesis of no treatment effect.
	Effects map[string]float64
	// Scale is SimScaleIdentity, SimScaleLog or "" (chosen per response).
	Scale string
	// Mean, ResidualSD, SiteSD, BlockSD, UnitSD override the defaults for
	// every response column; nil keeps the default.
	Mean, ResidualSD, SiteSD, BlockSD, UnitSD, GroupSD *float64
	// Workers is the number of goroutines (0: up to 2, never more than
	// GOMAXPROCS).
	Workers int
}

// SimRate is an estimated probability: Count of Of simulated data sets,
// Rate = Count/Of and its Monte Carlo standard error sqrt(Rate(1-Rate)/Of).
// Of is 0 (and Rate, SE are 0) when no data set qualified.
type SimRate struct {
	Count int     `json:"count"`
	Of    int     `json:"of"`
	Rate  float64 `json:"rate"`
	SE    float64 `json:"mc_se"`
}

func newRate(count, of int) SimRate {
	r := SimRate{Count: count, Of: of}
	if of > 0 {
		r.Rate = float64(count) / float64(of)
		r.SE = math.Sqrt(r.Rate * (1 - r.Rate) / float64(of))
	}
	return r
}

// SimResult is the outcome of Simulate.
type SimResult struct {
	// Trial and PlanHash identify the plan simulated.
	Trial    string `json:"trial"`
	PlanHash string `json:"plan_hash"`
	Runs     int    `json:"runs"`
	Seed     uint64 `json:"seed"`
	Errors   string `json:"errors"`
	// Effects are the treatment shifts used, sorted by level.
	Effects []SimEffect `json:"effects"`
	// Responses are the generating models, one per simulated response column.
	Responses []SimResponse `json:"responses"`
	// Rows is the number of rows of each simulated data set.
	Rows      int           `json:"rows"`
	Endpoints []SimEndpoint `json:"endpoints"`
}

// SimEffect is one treatment level's shift on the generating scale.
type SimEffect struct {
	Level string  `json:"level"`
	Delta float64 `json:"delta"`
}

// SimResponse is the generating model of one response column.
type SimResponse struct {
	Column     string  `json:"column"`
	Scale      string  `json:"scale"`
	Mean       float64 `json:"mean"`
	ResidualSD float64 `json:"residual_sd"`
	SiteSD     float64 `json:"site_sd"`
	BlockSD    float64 `json:"block_sd"`
	UnitSD     float64 `json:"unit_sd"`
	// GroupSD is the standard deviation of the effects of each further
	// random grouping the plan declares (Groups names them), e.g. whole
	// plots in a split-plot.
	GroupSD float64  `json:"group_sd"`
	Groups  []string `json:"groups"`
	Min     *float64 `json:"min"`
	Max     *float64 `json:"max"`
	// Redrawn is the number of errors drawn again to stay in the declared
	// range, per simulated value.
	Redrawn float64 `json:"redrawn"`
}

// SimEndpoint tallies one endpoint over the simulated data sets.
type SimEndpoint struct {
	ID       string  `json:"id"`
	Response string  `json:"response"`
	Alpha    float64 `json:"alpha"`
	// Steps are in plan order. Their Reported rates and Failed sum to 1.
	Steps []SimStep `json:"steps"`
	// Failed: no step could be reported (every reached step failed to fit).
	Failed     SimRate         `json:"failed"`
	Hypotheses []SimHypothesis `json:"hypotheses"`
	// FamilyWise is the probability of at least one rejection among the
	// comparisons and term tests whose true effect is zero (equivalence
	// and non-inferiority hypotheses are not counted: showing them is not
	// a false rejection of a zero difference). Under the null this is the
	// family-wise error of the whole cascade.
	FamilyWise SimRate `json:"family_wise"`
	// FamilyWiseOf says how many comparisons and term tests FamilyWise covers.
	FamilyWiseOf int `json:"family_wise_of"`
}

// SimStep tallies one step of a cascade.
type SimStep struct {
	ID    string `json:"id"`
	Model string `json:"model"`
	// Reached: the cascade ran the step. FitFailed: of those, the model
	// could not be fitted. Reported: the step's results were reported
	// (accepted, or last resort with assumptions unmet); Unmet is the part
	// of Reported with assumptions unmet. All are shares of all runs
	// except FitFailed (of Reached).
	Reached   SimRate    `json:"reached"`
	FitFailed SimRate    `json:"fit_failed"`
	Reported  SimRate    `json:"reported"`
	Unmet     SimRate    `json:"assumptions_unmet"`
	Checks    []SimCheck `json:"checks"`
}

// SimCheck tallies one assumption check: how often it did not pass
// (failed or could not be computed) among the runs in which it was run.
type SimCheck struct {
	Test   string  `json:"test"`
	NotMet SimRate `json:"not_met"`
	// Errors counts runs in which the check could not be computed.
	Errors int `json:"errors"`
}

// SimHypothesis tallies one hypothesis.
type SimHypothesis struct {
	ID   string `json:"id"`
	Kind string `json:"kind"`
	// Sides and Adjust are the declared sides and multiplicity adjustment
	// ("" for term, equivalence and non-inferiority hypotheses).
	Sides  string `json:"sides"`
	Adjust string `json:"adjust"`
	// Assessable: share of runs in which the reported step could answer it.
	Assessable SimRate `json:"assessable"`
	// Any: at least one comparison rejected (or the term test), of all runs.
	Any         SimRate         `json:"any_rejected"`
	Comparisons []SimComparison `json:"comparisons"`
}

// SimComparison is one comparison's rejection rate, of all runs (a run
// in which it could not be assessed counts as not rejected). For a term
// hypothesis there is one entry, the F test.
type SimComparison struct {
	Label string `json:"label"`
	// TrueNull is true when the simulated difference (or term effect) is zero.
	TrueNull bool    `json:"true_null"`
	Delta    float64 `json:"true_delta"`
	Rejected SimRate `json:"rejected"`
}

// simRun is what one data set contributes to the tallies.
type simRun struct {
	eps []simEpRun
	err error
}

type simEpRun struct {
	reached, fitFailed []bool
	reported, unmet    int // step index, -1
	checkRun, checkBad [][]bool
	checkErr           [][]bool
	assessable         []bool
	rejected           [][]bool // per hypothesis, per comparison label index
	labels             [][]string
}

// simLayout is the design every simulated data set shares.
type simLayout struct {
	header   []string
	colIdx   map[string]int
	fixed    [][]string // text cells of every non-response column, per row
	site     []int      // site index per row (-1 none)
	block    []int      // block-within-site index per row (-1 none)
	unit     []int      // unit index per row
	trt      []string   // treatment level per row ("" none)
	baseline []bool     // row at the first repeat level (no effect added)
	nSite    int
	nBlock   int // distinct site x block-combination keys
	nUnit    int
	multiRow bool // a unit has more than one row
	covs     []simCov
	// groups are the further random groupings the plan's steps declare
	// (random terms of several columns other than block within site, e.g.
	// the whole plot block x irrigation of a split-plot): the group index
	// of every row, per term, and the number of groups.
	groups  [][]int
	nGroups []int
	// groupNames name those terms, e.g. "irrigation within block".
	groupNames []string
}

type simCov struct {
	col      int
	min, max *float64
}

// Simulate generates opt.Runs data sets from the plan's declared design
// and the model documented on SimOptions, runs every endpoint's cascade on
// each with the engine Run uses (exclusions included), and tallies step
// choices, check outcomes and hypothesis rejections with their Monte Carlo
// standard errors. The plan must be valid (plan.Load without errors). The
// same plan and options give the same result.
func Simulate(p *plan.Plan, opt SimOptions) (*SimResult, error) {
	if p == nil {
		return nil, errors.New("no plan")
	}
	if len(p.Endpoints) == 0 {
		return nil, errors.New("the plan declares no endpoints")
	}
	runs := opt.Runs
	if runs == 0 {
		runs = DefaultSimRuns
	}
	if runs < 0 || runs > 1_000_000 {
		return nil, fmt.Errorf("runs %d is outside 1 to 1000000", opt.Runs)
	}
	shape := opt.Errors
	if shape == "" {
		shape = SimNormal
	}
	if !slices.Contains(SimErrorShapes, shape) {
		return nil, fmt.Errorf("unknown error shape %q (want %s)", opt.Errors, strings.Join(SimErrorShapes, ", "))
	}
	switch opt.Scale {
	case "", SimScaleIdentity, SimScaleLog:
	default:
		return nil, fmt.Errorf("unknown scale %q (want identity or log)", opt.Scale)
	}
	lay, err := buildLayout(p)
	if err != nil {
		return nil, fmt.Errorf("%w", err)
	}
	trt := engine.ColumnByRole(p, plan.RoleTreatment)
	var effects []SimEffect
	for lev, d := range opt.Effects {
		if trt == nil {
			return nil, errors.New("effects given but the plan declares no treatment column")
		}
		if !slices.Contains(trt.Levels, lev) {
			return nil, fmt.Errorf("effect level %q is not a declared level of %s (%s)", lev, trt.Name, strings.Join(trt.Levels, ", "))
		}
		if math.IsNaN(d) || math.IsInf(d, 0) {
			return nil, fmt.Errorf("effect of %s is not a finite number", lev)
		}
		effects = append(effects, SimEffect{Level: lev, Delta: d})
	}
	slices.SortFunc(effects, func(a, b SimEffect) int { return cmp.Compare(a.Level, b.Level) })
	delta := map[string]float64{}
	for _, e := range effects {
		delta[e.Level] = e.Delta
	}
	var models []SimResponse
	for i := range p.Columns {
		c := &p.Columns[i]
		if c.Role != plan.RoleResponse {
			continue
		}
		m, err := responseModel(p, c, opt, lay)
		if err != nil {
			return nil, fmt.Errorf("response %s: %w", c.Name, err)
		}
		models = append(models, m)
	}

	// The first data set must meet the plan's data contract: a failure
	// here is a layout the generator cannot make, not a property of the cascade.
	first, _ := simTable(p, lay, models, delta, shape, simStream(opt.Seed, 0))
	if diags, _ := contract.CheckData(p, first); diags.HasErrors() {
		for _, d := range diags.Sort() {
			if d.Severity == plan.Error {
				return nil, fmt.Errorf("the simulated data do not meet the plan (%s); this design cannot be simulated", d.Summary)
			}
		}
	}

	workers := opt.Workers
	if workers <= 0 {
		workers = min(2, runtime.GOMAXPROCS(0))
	}
	workers = max(1, min(workers, runs))
	out := make([]simRun, runs)
	redraws := make([][]int, runs) // per run, per response: redraws
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			eng := engine.NewCascade()
			for i := w; i < runs; i += workers {
				t, rd := simTable(p, lay, models, delta, shape, simStream(opt.Seed, uint64(i)))
				redraws[i] = rd
				out[i] = simOne(eng, p, t)
			}
		}()
	}
	wg.Wait()
	for i := range out {
		if out[i].err != nil {
			return nil, fmt.Errorf("data set %d: %w", i+1, out[i].err)
		}
	}
	for k := range models {
		n := 0
		for i := range redraws {
			n += redraws[i][k]
		}
		models[k].Redrawn = float64(n) / float64(runs*len(lay.unit))
	}
	res := &SimResult{Trial: p.Trial.ID, PlanHash: plan.Hash(p), Runs: runs, Seed: opt.Seed, Errors: shape,
		Effects: effects, Responses: models, Rows: len(lay.unit)}
	if res.Effects == nil {
		res.Effects = []SimEffect{}
	}
	for k := range p.Endpoints {
		res.Endpoints = append(res.Endpoints, tallyEndpoint(p, &p.Endpoints[k], k, out, delta))
	}
	return res, nil
}

// simStream is the random stream of data set i.
func simStream(seed, i uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, i))
}

// buildLayout lays out the rows every data set shares.
func buildLayout(p *plan.Plan) (*simLayout, error) {
	lay := &simLayout{colIdx: map[string]int{}}
	var cellCols, blockCols []*plan.Column
	var site, unit, rep *plan.Column
	for i := range p.Columns {
		c := &p.Columns[i]
		lay.colIdx[c.Name] = len(lay.header)
		lay.header = append(lay.header, c.Name)
		switch c.Role {
		case plan.RoleTreatment, plan.RoleFactor:
			cellCols = append(cellCols, c)
		case plan.RoleBlock:
			blockCols = append(blockCols, c)
		case plan.RoleSite:
			if site == nil {
				site = c
			} else if len(c.Levels) == 0 {
				return nil, fmt.Errorf("site column %s declares no levels", c.Name)
			}
		case plan.RoleUnit:
			if unit == nil {
				unit = c
			}
		case plan.RoleRepeat:
			if rep == nil {
				rep = c
			} else if len(c.Levels) == 0 {
				return nil, fmt.Errorf("repeat column %s declares no levels", c.Name)
			}
		case plan.RoleCovariate:
			lay.covs = append(lay.covs, simCov{col: lay.colIdx[c.Name], min: c.Min, max: c.Max})
		}
		if c.IsFactor() && c.Role != plan.RoleUnit && len(c.Levels) == 0 {
			return nil, fmt.Errorf("column %s (%s) declares no levels, so its values cannot be simulated", c.Name, c.Role)
		}
	}
	trt := engine.ColumnByRole(p, plan.RoleTreatment)
	levels := make([][]string, len(cellCols))
	for k, c := range cellCols {
		levels[k] = c.Levels
	}
	var cells [][]string
	if len(cellCols) > 0 {
		contract.ForEachCombination(levels, func(parts []string) { cells = append(cells, slices.Clone(parts)) })
	} else {
		cells = [][]string{nil}
	}
	reps := max(1, p.Design.Replicates)
	subs := max(1, p.Design.Subsamples)
	sites := []string{""}
	if site != nil {
		sites = site.Levels
	}
	times := []string{""}
	if rep != nil {
		times = rep.Levels
	}
	lay.nSite = len(sites)
	lay.multiRow = len(times)*subs > 1
	if rows := len(sites) * len(cells) * reps * len(times) * subs; rows > 200_000 {
		return nil, fmt.Errorf("the declared design has %d rows, more than the 200000 a simulation allows", rows)
	}
	blockKey := map[string]int{}
	for si := range sites {
		for ci, cell := range cells {
			for j := range reps {
				u := lay.nUnit
				lay.nUnit++
				bidx := make([]string, len(blockCols))
				for k, bc := range blockCols {
					bidx[k] = bc.Levels[(j+k*ci)%len(bc.Levels)]
				}
				bk := -1
				if len(blockCols) > 0 {
					key := strconv.Itoa(si) + "\x00" + strings.Join(bidx, "\x00")
					v, ok := blockKey[key]
					if !ok {
						v = len(blockKey)
						blockKey[key] = v
					}
					bk = v
				}
				for ti, tm := range times {
					for range subs {
						row := make([]string, len(lay.header))
						for i := range p.Columns {
							c := &p.Columns[i]
							switch c.Role {
							case plan.RoleLabel:
								row[i] = "sim"
							case plan.RoleSite:
								if c == site {
									row[i] = sites[si]
								} else {
									row[i] = c.Levels[0]
								}
							case plan.RoleRepeat:
								if c == rep {
									row[i] = tm
								} else {
									row[i] = c.Levels[0]
								}
							case plan.RoleUnit:
								row[i] = fmt.Sprintf("u%04d", u+1)
							}
						}
						for k, c := range cellCols {
							row[lay.colIdx[c.Name]] = cell[k]
						}
						for k, bc := range blockCols {
							row[lay.colIdx[bc.Name]] = bidx[k]
						}
						lay.fixed = append(lay.fixed, row)
						lay.site = append(lay.site, cond(site != nil, si, -1))
						lay.block = append(lay.block, bk)
						lay.unit = append(lay.unit, u)
						lev := ""
						if trt != nil {
							lev = row[lay.colIdx[trt.Name]]
						}
						lay.trt = append(lay.trt, lev)
						lay.baseline = append(lay.baseline, rep != nil && ti == 0 && len(times) > 1)
					}
				}
			}
		}
	}
	lay.nBlock = len(blockKey)
	addGroupings(p, lay)
	return lay, nil
}

// addGroupings adds to the layout the random terms of several columns that
// the plan's steps declare and the site, block and unit effects do not
// already cover (a term whose columns are all site and block columns is
// the block within site; a term that holds the unit column is the unit).
// Terms are taken in plan order, each once; groups are numbered in row
// order so the draws are deterministic.
func addGroupings(p *plan.Plan, lay *simLayout) {
	seen := map[string]bool{}
	for _, ep := range p.Endpoints {
		for _, st := range ep.Steps {
			for _, t := range st.Random {
				if len(t.Columns) < 2 {
					continue
				}
				covered := true
				for _, name := range t.Columns {
					c := engine.PlanColumn(p, name)
					if c == nil {
						covered = true
						break
					}
					if c.Role == plan.RoleUnit {
						covered = true
						break
					}
					if c.Role != plan.RoleSite && c.Role != plan.RoleBlock {
						covered = false
					}
				}
				key := strings.Join(t.Columns, "\x00")
				if covered || seen[key] {
					continue
				}
				seen[key] = true
				idx := map[string]int{}
				rows := make([]int, len(lay.fixed))
				for i, row := range lay.fixed {
					var parts []string
					for _, name := range t.Columns {
						parts = append(parts, row[lay.colIdx[name]])
					}
					k := strings.Join(parts, "\x00")
					g, ok := idx[k]
					if !ok {
						g = len(idx)
						idx[k] = g
					}
					rows[i] = g
				}
				lay.groups = append(lay.groups, rows)
				lay.nGroups = append(lay.nGroups, len(idx))
				inner := t.Columns[len(t.Columns)-1]
				lay.groupNames = append(lay.groupNames, inner+" within "+strings.Join(t.Columns[:len(t.Columns)-1], " x "))
			}
		}
	}
}

func cond[T any](c bool, a, b T) T {
	if c {
		return a
	}
	return b
}

// responseModel fills the documented defaults for one response column.
func responseModel(p *plan.Plan, c *plan.Column, opt SimOptions, lay *simLayout) (SimResponse, error) {
	m := SimResponse{Column: c.Name, Min: c.Min, Max: c.Max, Scale: opt.Scale}
	if m.Scale == "" {
		m.Scale = SimScaleIdentity
		if c.Min != nil && *c.Min >= 0 && logAnalysed(p, c.Name) {
			m.Scale = SimScaleLog
		}
	}
	lo, hi := c.Min, c.Max
	if m.Scale == SimScaleLog {
		if lo != nil && *lo < 0 {
			return m, fmt.Errorf("a log generating scale needs min >= 0, the column declares %g", *lo)
		}
		m.ResidualSD = 0.4
		switch {
		case lo != nil && *lo > 0 && hi != nil:
			m.Mean = math.Log(math.Sqrt(*lo) * math.Sqrt(*hi))
		case hi != nil && *hi > 0:
			m.Mean = math.Log(*hi / 100)
		case lo != nil && *lo > 0:
			m.Mean = math.Log(*lo * 100)
		default:
			m.Mean = math.Log(100)
		}
	} else {
		m.ResidualSD = 1
		switch {
		case lo != nil && hi != nil:
			m.Mean = (*lo)/2 + (*hi)/2
			if *hi > *lo {
				m.ResidualSD = (*hi - *lo) / 20
			}
		case lo != nil:
			m.Mean = *lo + 10*m.ResidualSD
		case hi != nil:
			m.Mean = *hi - 10*m.ResidualSD
		}
	}
	if opt.ResidualSD != nil {
		m.ResidualSD = *opt.ResidualSD
		if m.Scale == SimScaleIdentity && (lo == nil) != (hi == nil) {
			// one bound: stay ten standard deviations inside it
			if lo != nil {
				m.Mean = *lo + 10*m.ResidualSD
			} else {
				m.Mean = *hi - 10*m.ResidualSD
			}
		}
	}
	if opt.Mean != nil {
		m.Mean = *opt.Mean
	}
	if lay.nSite > 1 || engine.ColumnByRole(p, plan.RoleSite) != nil {
		m.SiteSD = m.ResidualSD
	}
	if lay.nBlock > 0 {
		m.BlockSD = m.ResidualSD / 2
	}
	if lay.multiRow {
		m.UnitSD = m.ResidualSD / 2
	}
	m.Groups = slices.Clone(lay.groupNames)
	if m.Groups == nil {
		m.Groups = []string{}
	}
	if len(lay.groups) > 0 {
		m.GroupSD = m.ResidualSD / 2
	}
	for _, o := range []struct {
		v   *float64
		dst *float64
	}{{opt.SiteSD, &m.SiteSD}, {opt.BlockSD, &m.BlockSD}, {opt.UnitSD, &m.UnitSD}, {opt.GroupSD, &m.GroupSD}} {
		if o.v != nil {
			*o.dst = *o.v
		}
	}
	for name, v := range map[string]float64{"mean": m.Mean, "residual sd": m.ResidualSD, "site sd": m.SiteSD, "block sd": m.BlockSD, "unit sd": m.UnitSD, "group sd": m.GroupSD} {
		if math.IsNaN(v) || math.IsInf(v, 0) || (name != "mean" && v < 0) {
			return m, fmt.Errorf("%s %g is not usable", name, v)
		}
	}
	if m.ResidualSD == 0 {
		return m, errors.New("residual sd must be positive")
	}
	eta := m.Mean
	if m.Scale == SimScaleLog {
		eta = math.Exp(eta)
	}
	if (lo != nil && eta < *lo) || (hi != nil && eta > *hi) {
		return m, fmt.Errorf("the mean lies outside the declared range")
	}
	return m, nil
}

// logAnalysed reports whether some step of an endpoint on the response
// analyses it on a log scale.
func logAnalysed(p *plan.Plan, response string) bool {
	for _, ep := range p.Endpoints {
		if ep.Response != response {
			continue
		}
		for _, s := range ep.Steps {
			if engine.IsLogScale(s.Transform) {
				return true
			}
		}
	}
	return false
}

// simError draws one standardised error (mean 0, variance 1) of the shape.
func simError(r *rand.Rand, shape string) float64 {
	switch shape {
	case SimLognormal:
		// exp(Z) has mean e^(1/2) and variance (e - 1) e.
		return (math.Exp(r.NormFloat64()) - math.Exp(0.5)) / math.Sqrt((math.E-1)*math.E)
	case SimContaminated:
		z := r.NormFloat64()
		if r.Float64() < 0.1 {
			z *= 3
		}
		return z / math.Sqrt(1.8) // variance 0.9 + 0.1 * 9
	case SimT3:
		// t = Z / sqrt(chi2_3 / 3), variance 3.
		var c float64
		for range 3 {
			g := r.NormFloat64()
			c += g * g
		}
		return r.NormFloat64() / math.Sqrt(c/3) / math.Sqrt(3)
	}
	return r.NormFloat64()
}

// simTable draws one data set and builds its Table with the readers'
// builder. It returns the number of redrawn errors per response.
func simTable(p *plan.Plan, lay *simLayout, models []SimResponse, delta map[string]float64, shape string, r *rand.Rand) (*table.Table, []int) {
	n := len(lay.unit)
	cells := make([][]string, n)
	for i := range cells {
		cells[i] = slices.Clone(lay.fixed[i])
	}
	redraw := make([]int, len(models))
	for k, m := range models {
		col := lay.colIdx[m.Column]
		site := draws(r, lay.nSite, m.SiteSD)
		block := draws(r, lay.nBlock, m.BlockSD)
		unit := draws(r, lay.nUnit, m.UnitSD)
		group := make([][]float64, len(lay.groups))
		for g := range lay.groups {
			group[g] = draws(r, lay.nGroups[g], m.GroupSD)
		}
		for i := range n {
			eta := m.Mean
			for g := range lay.groups {
				eta += group[g][lay.groups[g][i]]
			}
			if lay.site[i] >= 0 {
				eta += site[lay.site[i]]
			}
			if lay.block[i] >= 0 {
				eta += block[lay.block[i]]
			}
			eta += unit[lay.unit[i]]
			if !lay.baseline[i] {
				eta += delta[lay.trt[i]]
			}
			var y float64
			for try := 0; ; try++ {
				y = eta + m.ResidualSD*simError(r, shape)
				if m.Scale == SimScaleLog {
					y = math.Exp(y)
				}
				if (m.Min == nil || y >= *m.Min) && (m.Max == nil || y <= *m.Max) {
					break
				}
				redraw[k]++
				if try == 99 {
					if m.Min != nil && y < *m.Min {
						y = *m.Min
					} else {
						y = *m.Max
					}
					break
				}
			}
			cells[i][col] = strconv.FormatFloat(y, 'g', -1, 64)
		}
	}
	for _, cv := range lay.covs {
		for i := range n {
			var x float64
			switch {
			case cv.min != nil && cv.max != nil:
				x = *cv.min + r.Float64()*(*cv.max-*cv.min)
			case cv.min != nil:
				x = *cv.min + r.ExpFloat64()
			case cv.max != nil:
				x = *cv.max - r.ExpFloat64()
			default:
				x = r.NormFloat64()
			}
			cells[i][cv.col] = strconv.FormatFloat(x, 'g', -1, 64)
		}
	}
	native := make([]bool, len(lay.header))
	for i := range p.Columns {
		native[i] = p.Columns[i].IsNumeric()
	}
	return table.FromCells(p, "simulated.csv", lay.header, cells, native), redraw
}

func draws(r *rand.Rand, n int, sd float64) []float64 {
	out := make([]float64, n)
	if sd > 0 {
		for i := range out {
			out[i] = sd * r.NormFloat64()
		}
	}
	return out
}

// simOne runs every endpoint on one data set.
func simOne(eng *engine.Cascade, p *plan.Plan, t *table.Table) simRun {
	kept, _, _, err := engine.ApplyExclusions(p, t)
	if err != nil {
		return simRun{err: err}
	}
	var run simRun
	for k := range p.Endpoints {
		ep := &p.Endpoints[k]
		er := eng.RunEndpoint(p, kept, ep)
		ns := len(ep.Steps)
		e := simEpRun{reached: make([]bool, ns), fitFailed: make([]bool, ns), reported: -1, unmet: -1,
			checkRun: make([][]bool, ns), checkBad: make([][]bool, ns), checkErr: make([][]bool, ns)}
		for i, sr := range er.Steps {
			e.reached[i] = sr.Executed
			e.fitFailed[i] = sr.Executed && sr.Error != ""
			e.checkRun[i] = make([]bool, len(sr.Checks))
			e.checkBad[i] = make([]bool, len(sr.Checks))
			e.checkErr[i] = make([]bool, len(sr.Checks))
			for j, cr := range sr.Checks {
				if cr.Verdict == record.VerdictNotRun {
					continue
				}
				e.checkRun[i][j] = true
				e.checkBad[i][j] = cr.Verdict != record.VerdictPass
				e.checkErr[i][j] = cr.Verdict == record.VerdictError
			}
			if sr.ID == er.Reported && er.Reported != "" {
				e.reported = i
				if er.Status == record.EndpointAssumptionsUnmet {
					e.unmet = i
				}
			}
		}
		for _, hr := range er.Hypotheses {
			e.assessable = append(e.assessable, hr.Assessable)
			var labels []string
			var rej []bool
			if hr.TermTest != nil {
				labels = append(labels, "")
				rej = append(rej, !math.IsNaN(float64(hr.TermTest.P)) && float64(hr.TermTest.P) < float64(hr.Alpha))
			}
			for _, c := range hr.Comparisons {
				labels = append(labels, c.Level+"\x00"+c.Against)
				rej = append(rej, c.Reject)
			}
			e.labels = append(e.labels, labels)
			e.rejected = append(e.rejected, rej)
		}
		run.eps = append(run.eps, e)
	}
	return run
}

// tallyEndpoint merges the runs of endpoint k in run order.
func tallyEndpoint(p *plan.Plan, ep *plan.Endpoint, k int, runs []simRun, delta map[string]float64) SimEndpoint {
	n := len(runs)
	alpha := ep.Alpha
	if alpha == 0 {
		alpha = 0.05
	}
	se := SimEndpoint{ID: ep.ID, Response: ep.Response, Alpha: alpha}
	failed := 0
	for _, r := range runs {
		if r.eps[k].reported < 0 {
			failed++
		}
	}
	se.Failed = newRate(failed, n)
	for i, s := range ep.Steps {
		st := SimStep{ID: s.ID, Model: s.Model}
		var reached, fitFailed, reported, unmet int
		checkRun := make([]int, len(s.Checks))
		checkBad := make([]int, len(s.Checks))
		checkErr := make([]int, len(s.Checks))
		for _, r := range runs {
			e := r.eps[k]
			if e.reached[i] {
				reached++
			}
			if e.fitFailed[i] {
				fitFailed++
			}
			if e.reported == i {
				reported++
			}
			if e.unmet == i {
				unmet++
			}
			for j := range s.Checks {
				if j < len(e.checkRun[i]) && e.checkRun[i][j] {
					checkRun[j]++
					if e.checkBad[i][j] {
						checkBad[j]++
					}
					if e.checkErr[i][j] {
						checkErr[j]++
					}
				}
			}
		}
		st.Reached, st.FitFailed = newRate(reached, n), newRate(fitFailed, reached)
		st.Reported, st.Unmet = newRate(reported, n), newRate(unmet, n)
		st.Checks = []SimCheck{}
		for j, c := range s.Checks {
			st.Checks = append(st.Checks, SimCheck{Test: c.Test, NotMet: newRate(checkBad[j], checkRun[j]), Errors: checkErr[j]})
		}
		se.Steps = append(se.Steps, st)
	}
	trt := engine.ColumnByRole(p, plan.RoleTreatment)
	anyEffect := false
	for _, d := range delta {
		if d != 0 {
			anyEffect = true
		}
	}
	// null[h][label] says whether a comparison's true effect is zero.
	type cmpKey struct {
		h     int
		label string
	}
	nullOf := map[cmpKey]bool{}
	for h := range ep.Hypotheses {
		hyp := &ep.Hypotheses[h]
		st := SimHypothesis{ID: hyp.ID, Kind: hyp.Kind, Sides: cmp.Or(hyp.Sides, "two-sided"), Adjust: cmp.Or(hyp.Adjust, plan.AdjustNone)}
		switch hyp.Kind {
		case plan.HypEquivalence, plan.HypNonInferiority:
			st.Adjust, st.Sides = "", ""
		case plan.HypTerm:
			st.Adjust, st.Sides = "", ""
		}
		factor := hyp.Factor
		if factor == "" && trt != nil {
			factor = trt.Name
		}
		var order []string
		count := map[string]int{}
		assess, anyRej := 0, 0
		for _, r := range runs {
			e := r.eps[k]
			if h >= len(e.assessable) {
				continue
			}
			if e.assessable[h] {
				assess++
			}
			hit := false
			for j, lab := range e.labels[h] {
				if _, seen := count[lab]; !seen {
					count[lab] = 0
					order = append(order, lab)
				}
				if e.rejected[h][j] {
					count[lab]++
					hit = true
				}
			}
			if hit {
				anyRej++
			}
		}
		st.Assessable, st.Any = newRate(assess, n), newRate(anyRej, n)
		st.Comparisons = []SimComparison{}
		for _, lab := range order {
			c := SimComparison{Rejected: newRate(count[lab], n)}
			if lab == "" {
				c.Label = "F test of " + strings.Join(hyp.Term, " x ")
				c.TrueNull = !anyEffect || trt == nil || !slices.Contains(hyp.Term, trt.Name)
			} else {
				lev, against, _ := strings.Cut(lab, "\x00")
				c.Label = lev + " - " + against
				if trt != nil && factor == trt.Name {
					c.Delta = delta[lev] - delta[against]
				}
				c.TrueNull = c.Delta == 0
			}
			key := cmpKey{h, lab}
			nullOf[key] = c.TrueNull
			st.Comparisons = append(st.Comparisons, c)
		}
		se.Hypotheses = append(se.Hypotheses, st)
	}
	counted := map[cmpKey]bool{}
	fw := 0
	for _, r := range runs {
		e := r.eps[k]
		hit := false
		for h := range e.labels {
			kind := ep.Hypotheses[h].Kind
			if kind == plan.HypEquivalence || kind == plan.HypNonInferiority {
				continue
			}
			for j, lab := range e.labels[h] {
				key := cmpKey{h, lab}
				if !nullOf[key] {
					continue
				}
				counted[key] = true
				if e.rejected[h][j] {
					hit = true
				}
			}
		}
		if hit {
			fw++
		}
	}
	se.FamilyWise, se.FamilyWiseOf = newRate(fw, n), len(counted)
	return se
}
