package lm

import (
	"bufio"
	"fmt"
	"math"
	"math/big"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/design"

	"furrow/internal/testkit"
)

// The NIST StRD files are read from the shared reference folder beside the
// checkout (NIST/ITL Statistical Reference Datasets,
// https://www.itl.nist.gov/div898/strd/). Certified values are taken from
// each file's own header at test time; strdPath skips (and counts the
// skip) when a file is absent.
func strdPath(t *testing.T, sub, name string) string {
	t.Helper()
	return testkit.SharedPath(t, "nist-strd/"+sub+"/"+name)
}

// lre is the log relative error -log10(|x-c|/|c|) (absolute when c = 0),
// capped at 15 digits.
func lre(x, c float64) float64 {
	d := math.Abs(x - c)
	if c != 0 {
		d /= math.Abs(c)
	}
	if d == 0 {
		return 15
	}
	return math.Min(15, -math.Log10(d))
}

type strdFile struct {
	lines    []string
	dataFrom int // 1-based inclusive line numbers
	dataTo   int
}

var linesRe = regexp.MustCompile(`Data\s+\(lines\s+(\d+)\s+to\s+(\d+)\)`)

func readSTRD(t *testing.T, path string) *strdFile {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	var f strdFile
	sc := bufio.NewScanner(fh)
	for sc.Scan() {
		f.lines = append(f.lines, strings.TrimRight(sc.Text(), " \t\r"))
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	for _, l := range f.lines[:20] {
		if m := linesRe.FindStringSubmatch(l); m != nil {
			f.dataFrom, _ = strconv.Atoi(m[1])
			f.dataTo, _ = strconv.Atoi(m[2])
		}
	}
	if f.dataFrom == 0 {
		t.Fatalf("%s: no data line range in header", path)
	}
	return &f
}

func num(t *testing.T, s string) float64 {
	t.Helper()
	if s == "Infinity" {
		return math.Inf(1)
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("parsing %q: %v", s, err)
	}
	return v
}

// fieldsAfter returns the fields of the first header line starting (after
// blanks) with prefix and carrying values, with the prefix removed.
func (f *strdFile) fieldsAfter(prefix string) []string {
	for _, l := range f.lines[:f.dataFrom-1] {
		s := strings.TrimSpace(l)
		if strings.HasPrefix(s, prefix) {
			if fs := strings.Fields(strings.TrimPrefix(s, prefix)); len(fs) > 0 {
				return fs
			}
		}
	}
	return nil
}

func (f *strdFile) data() [][]string {
	var out [][]string
	for _, l := range f.lines[f.dataFrom-1 : f.dataTo] {
		if fs := strings.Fields(l); len(fs) > 0 {
			out = append(out, fs)
		}
	}
	return out
}

type llsCert struct {
	coef, sd           []float64
	names              []string
	resSD, r2          float64
	regDF              int
	regSS, regMS, fval float64
	resDF              int
	resSS, resMS       float64
}

func parseLLS(t *testing.T, f *strdFile) llsCert {
	var c llsCert
	bRe := regexp.MustCompile(`^B(\d+)$`)
	for _, l := range f.lines[:f.dataFrom-1] {
		fs := strings.Fields(l)
		if len(fs) == 3 && bRe.MatchString(fs[0]) {
			c.names = append(c.names, fs[0])
			c.coef = append(c.coef, num(t, fs[1]))
			c.sd = append(c.sd, num(t, fs[2]))
		}
	}
	c.resSD = num(t, f.fieldsAfter("Standard Deviation")[0])
	c.r2 = num(t, f.fieldsAfter("R-Squared")[0])
	reg := f.fieldsAfter("Regression")
	c.regDF, _ = strconv.Atoi(reg[0])
	c.regSS, c.regMS, c.fval = num(t, reg[1]), num(t, reg[2]), num(t, reg[3])
	res := f.fieldsAfter("Residual ")
	c.resDF, _ = strconv.Atoi(res[0])
	c.resSS, c.resMS = num(t, res[1]), num(t, res[2])
	return c
}

// llsDesign builds X for the file's model: a polynomial in x when there is
// one predictor and B0 is present, y = B1 x for the no-intercept sets, and
// an intercept plus each predictor for Longley.
func llsDesign(t *testing.T, c llsCert, rows [][]string) (*mat.Dense, []float64) {
	n := len(rows)
	p := len(c.coef)
	X := mat.NewDense(n, p, nil)
	y := make([]float64, n)
	for i, r := range rows {
		y[i] = num(t, r[0])
		preds := r[1:]
		switch {
		case c.names[0] != "B0": // y = B1 x
			X.Set(i, 0, num(t, preds[0]))
		case len(preds) == 1: // polynomial
			x := num(t, preds[0])
			v := 1.0
			for j := 0; j < p; j++ {
				X.Set(i, j, v)
				v *= x
			}
		default:
			X.Set(i, 0, 1)
			for j, s := range preds {
				X.Set(i, j+1, num(t, s))
			}
		}
	}
	return X, y
}

// TestNISTLinear checks every StRD linear least-squares set against its
// certified values, as log relative errors (LRE, digits).
func TestNISTLinear(t *testing.T) {
	// minLRE is the floor on the worst LRE over the coefficients, their
	// SDs, the residual SD, R², and (where certified non-zero) the
	// regression SS and F: the worst LRE measured on linux/amd64 (in the
	// comment; 15 is the cap of lre) minus one digit, against NIST's
	// certified values.
	cases := []struct {
		name   string
		minLRE float64
	}{
		{"Norris", 12.6},   // 13.69 (F)
		{"Pontius", 12.5},  // 13.51 (coef)
		{"NoInt1", 13.7},   // 14.72 (coef)
		{"NoInt2", 13.9},   // 14.94 (se)
		{"Longley", 13.6},  // 14.62 (coef)
		{"Filip", 6.9},     // 7.90 (coef; the ill-conditioned degree-10 polynomial)
		{"Wampler1", 14},   // 15.00 (exact fit)
		{"Wampler2", 12.2}, // 13.20 (coef)
		{"Wampler3", 12.8}, // 13.80 (se)
		{"Wampler4", 12.8}, // 13.81 (se)
		{"Wampler5", 12.8}, // 13.80 (se)
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			f := readSTRD(t, strdPath(t, "lls", tc.name+".dat"))
			c := parseLLS(t, f)
			X, y := llsDesign(t, c, f.data())
			res, err := Fit(X, y, nil)
			if err != nil {
				t.Fatal(err)
			}
			if res.Rank != len(c.coef) {
				t.Fatalf("rank %d, want %d (aliased %v)", res.Rank, len(c.coef), res.Aliased)
			}
			minB, minSE := 15.0, 15.0
			for j := range c.coef {
				minB = math.Min(minB, lre(res.Estimate[j], c.coef[j]))
				if c.sd[j] == 0 {
					// Wampler1: exact fit, certified SDs are 0. Compare
					// absolutely against the coefficient's size.
					minSE = math.Min(minSE, lre(res.StdErr[j]/math.Max(1, math.Abs(c.coef[j])), 0))
				} else {
					minSE = math.Min(minSE, lre(res.StdErr[j], c.sd[j]))
				}
			}
			var sdLRE float64
			if c.resSD == 0 {
				// Exact fit: residual SD relative to the response scale.
				sdLRE = lre(res.Sigma/maxAbs(y), 0)
			} else {
				sdLRE = lre(res.Sigma, c.resSD)
			}
			r2LRE := lre(res.R2, c.r2)
			worst := math.Min(math.Min(minB, minSE), math.Min(sdLRE, r2LRE))
			msg := fmt.Sprintf("coef %.1f  se %.1f  resSD %.1f  R2 %.1f", minB, minSE, sdLRE, r2LRE)
			if c.resSS != 0 {
				ssLRE, fLRE := lre(res.ModelSS, c.regSS), lre(res.ModelF, c.fval)
				worst = math.Min(worst, math.Min(ssLRE, fLRE))
				msg += fmt.Sprintf("  regSS %.1f  F %.1f", ssLRE, fLRE)
			}
			t.Logf("LRE %s (worst %.2f)", msg, worst)
			if worst < tc.minLRE {
				t.Errorf("LRE %.1f below the floor %.1f: %s", worst, tc.minLRE, msg)
			}
			if res.DFResid != c.resDF || res.ModelDF != c.regDF {
				t.Errorf("df model %d resid %d, want %d %d", res.ModelDF, res.DFResid, c.regDF, c.resDF)
			}
		})
	}
}

func maxAbs(x []float64) float64 {
	var m float64
	for _, v := range x {
		m = math.Max(m, math.Abs(v))
	}
	return m
}

// exactShift parses decimal strings exactly and subtracts the first value,
// so that the 13 constant leading digits of SmLs07-09 are removed without
// rounding before conversion to float64 (as in the integrity check of
// /work/shared/reference/README.md). Every ANOVA quantity is invariant
// under a shift of the response.
func exactShift(t *testing.T, s []string) []float64 {
	var base big.Rat
	if _, ok := base.SetString(s[0]); !ok {
		t.Fatalf("parsing %q", s[0])
	}
	out := make([]float64, len(s))
	for i, v := range s {
		var r big.Rat
		if _, ok := r.SetString(v); !ok {
			t.Fatalf("parsing %q", v)
		}
		r.Sub(&r, &base)
		out[i], _ = r.Float64()
	}
	return out
}

// TestNISTANOVA fits the one-way StRD ANOVA sets as a linear model with one
// factor and checks the Type I table against the certified values.
// anovaFloor is the floor on the worst LRE of TestNISTANOVA, against
// NIST's certified values: the worst measured on linux/amd64 (in the
// comment; 15 is the cap of lre) minus one digit.
var anovaFloor = map[string]float64{
	"SiRstv":  13.7, // 14.73 (F)
	"SmLs01":  14,   // 15.00
	"SmLs02":  14,   // 15.00
	"SmLs03":  14,   // 15.00
	"AtmWtAg": 13.5, // 14.50 (within SS)
	"SmLs04":  14,   // 15.00
	"SmLs05":  14,   // 15.00
	"SmLs06":  14,   // 15.00
	"SmLs07":  14,   // 15.00
	"SmLs08":  14,   // 15.00
	"SmLs09":  14,   // 15.00
}

func TestNISTANOVA(t *testing.T) {
	names := []string{"SiRstv", "SmLs01", "SmLs02", "SmLs03", "AtmWtAg", "SmLs04", "SmLs05", "SmLs06", "SmLs07", "SmLs08", "SmLs09"}
	for _, name := range names {
		t.Run(name, func(t *testing.T) {
			f := readSTRD(t, strdPath(t, "anova", name+".dat"))
			between := f.fieldsAfter("Between")
			within := f.fieldsAfter("Within")
			if len(between) < 5 || len(within) < 4 {
				t.Fatalf("certified ANOVA rows not found")
			}
			bDF, _ := strconv.Atoi(between[1])
			bSS, bMS, fval := num(t, between[2]), num(t, between[3]), num(t, between[4])
			wDF, _ := strconv.Atoi(within[1])
			wSS, wMS := num(t, within[2]), num(t, within[3])
			rows := f.data()
			var labels, ys []string
			for _, r := range rows {
				labels = append(labels, r[0])
				ys = append(ys, r[1])
			}
			y := exactShift(t, ys)
			var levels []string
			codes := make([]int, len(labels))
			for i, l := range labels {
				k := -1
				for j, v := range levels {
					if v == l {
						k = j
					}
				}
				if k < 0 {
					levels = append(levels, l)
					k = len(levels) - 1
				}
				codes[i] = k
			}
			fr, err := design.NewFrame([]design.Factor{{Name: "g", Levels: levels, Codes: codes}}, nil)
			if err != nil {
				t.Fatal(err)
			}
			m, err := design.Build(fr, design.Spec{Intercept: true, Terms: []design.Term{{Vars: []string{"g"}}}})
			if err != nil {
				t.Fatal(err)
			}
			res, err := FitModel(m, y, nil)
			if err != nil {
				t.Fatal(err)
			}
			tab, err := res.ANOVA(TypeI)
			if err != nil {
				t.Fatal(err)
			}
			row := tab.Rows[0]
			if row.DF != bDF || tab.Residual.DF != wDF {
				t.Fatalf("df %d/%d, want %d/%d", row.DF, tab.Residual.DF, bDF, wDF)
			}
			got := map[string][2]float64{
				"between SS": {row.SS, bSS}, "between MS": {row.MS, bMS}, "F": {row.F, fval},
				"within SS": {tab.Residual.SS, wSS}, "within MS": {tab.Residual.MS, wMS},
			}
			msg := ""
			worst := 15.0
			for _, k := range []string{"between SS", "between MS", "within SS", "within MS", "F"} {
				l := lre(got[k][0], got[k][1])
				worst = math.Min(worst, l)
				msg += fmt.Sprintf(" %s %.1f", k, l)
			}
			t.Logf("LRE%s (worst %.2f)", msg, worst)
			if floor := anovaFloor[name]; worst < floor {
				t.Errorf("LRE %.2f below the floor %.1f:%s", worst, floor, msg)
			}
		})
	}
}
