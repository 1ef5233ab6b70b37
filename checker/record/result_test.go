package record

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// sampleResult returns a record with every optional part filled, so that
// the schema test exercises every definition.
func sampleResult() *Result {
	chk := CheckResult{Test: "shapiro-wilk", Pos: "plan.yaml:70:13", On: "residuals", N: 12,
		Statistic: 0.93, P: 0.41, FailBelow: 0.05, Verdict: VerdictPass, OnFail: "ranks"}
	lev := CheckResult{Test: "levene", Pos: "plan.yaml:72:13", By: []string{"treatment"}, On: "residuals by group",
		N: 12, Statistic: 1.2, DF: []Num{2, 9}, P: 0.35, FailBelow: 0.05, Verdict: VerdictPass}
	return &Result{
		Format: AuditFormat,
		Tool:   ToolInfo{Name: "furrow", Version: "v0.0.0-test", Build: "go1.26"},
		RunAt:  "2026-01-02T03:04:05Z",
		// Where the plan was from the run directory; every other path is
		// relative to the plan's folder.
		PlanLocation: "../plan.yaml",
		Trial:        TrialInfo{ID: "T-1", Title: "test <trial> & co", PlanVersion: "1.0"},
		Inputs: Inputs{
			PlanPath: "plan.yaml", PlanFileSHA256: SHA256Hex([]byte("p")), PlanHash: SHA256Hex([]byte("c")),
			Registration: &RegistrationRef{Path: "plan.registration.json", FileSHA256: SHA256Hex([]byte("r")),
				Head: SHA256Hex([]byte("h")), Matches: true,
				Chain: []ChainLink{{Seq: 1, PlanVersion: "1.0", PlanHash: SHA256Hex([]byte("c")),
					RegisteredAt: "2026-01-01T00:00:00Z", Reason: "initial registration", EntryHash: SHA256Hex([]byte("h"))}}},
			DataPath: "data.csv", DataDeclared: "data.csv", DataFileSHA256: SHA256Hex([]byte("d")), TableHash: SHA256Hex([]byte("t")),
			Rows: 13, Columns: []string{"unit", "treatment", "y"}, RowsKept: 12,
		},
		PlanWarnings: []Finding{},
		Files:        []FileHash{{Path: "report.md", SHA256: SHA256Hex([]byte("m"))}, {Path: "tables/checks.csv", SHA256: SHA256Hex([]byte("c"))}},
		PlanPaths: map[string]string{"plan.yaml:30:5": "exclusions[0]", "plan.yaml:60:5": "endpoints[0]",
			"plan.yaml:64:9": "endpoints[0].steps[0]", "plan.yaml:70:13": "endpoints[0].steps[0].checks[0]"},
		Design: &DesignSeen{Rows: 13, Units: 13, UnitColumn: "unit", CellColumns: []string{"treatment"}, Replicates: 5,
			LeastUnits: &LeastUnitsSeen{Per: "cell", Count: 4, Below: "stop", Pos: "plan.yaml:22:16"},
			Cells:      []CellSeen{{Levels: []string{"a"}, Units: 4}}, Missing: []MissingSeen{{Column: "y", Missing: 1}}},
		LostUnits:      []LostUnit{{Cell: []string{"a"}, Block: ""}, {Cell: []string{"b"}, Block: "B2", Unit: "u4", Rule: "no-y"}},
		DataWarnings:   []Finding{{Severity: "warning", Code: "value-implausible", Pos: "data.csv:4:3", Summary: "value is odd"}},
		Exclusions:     []ExcludedRow{{Row: 5, Unit: "u4", Rule: "no-y", RulePos: "plan.yaml:30:5"}},
		ExclusionRules: []ExclusionRule{{ID: "no-y", Pos: "plan.yaml:30:5", Drop: "row", When: "missing", Reason: "r", RowsRemoved: 1, Units: []string{"u4"}}},
		Endpoints: []EndpointResult{{
			ID: "yield", Pos: "plan.yaml:60:5", Response: "y", Primary: true, Alpha: 0.05,
			Status: EndpointAccepted, Reported: "anova", RowsAnalysed: 12,
			Steps: []StepResult{
				{ID: "anova", Pos: "plan.yaml:64:9", Executed: true,
					Model: ModelSpec{Text: "linear of y; fixed: treatment", Kind: "linear", Derive: "raw", Transform: "none",
						Fixed: [][]string{{"treatment"}}, DF: "residual", Anova: 3},
					N:      12,
					Rows:   12,
					Unused: []UnusedRow{{Row: 5, Unit: "u4", Reason: UnusedExcluded, Rule: "no-y"}},
					Fit:    &FitSummary{Method: "ols", Params: 3, ResidualDF: 9, Sigma: 1.5, RSquared: 0.6, Criterion: NaN, Converged: true},
					Checks: []CheckResult{chk, lev},
					Decision: Decision{Action: ActionAccept, Reason: ReasonChecksPassed, Rule: "plan.yaml:64:9",
						Detail: "every declared check passed"},
					Results: &StepDetail{
						Scale:        "y",
						Coefficients: []Coefficient{{Name: "(Intercept)", Estimate: 10, SE: 1, DF: 9, T: 10, P: 1e-6}},
						Anova: []AnovaRow{{Term: "treatment", Type: 3, DF: 2, SS: 30, MS: 15, F: 6.6, DenDF: 9, P: 0.017},
							{Term: "residuals", Type: 3, DF: 9, SS: 20.25, MS: 2.25, F: NaN, DenDF: NaN, P: NaN}},
						VarianceComponents: []VarComp{{Group: "block", Variance: 0, SD: 0, Share: 0, Boundary: true},
							{Group: "residual", Variance: 2.25, SD: 1.5, Share: 1}},
						MarginalMeans: []MarginalMean{{Factor: "treatment", Level: "a", Estimate: 10, SE: 0.75, DF: 9,
							Lower: 8.3, Upper: 11.7, Response: 10, ResponseLower: 8.3, ResponseUpper: 11.7}},
						Test:           &GlobalTest{Method: "kruskal-wallis", Statistic: 5.1, DF: []Num{2}, P: 0.078},
						GroupSummaries: []GroupSummary{{Level: "a", N: 4, Mean: 10, Median: 10, SD: 1}},
					},
					Figures: &DiagnosticData{Fitted: []Num{1, 2}, Residuals: []Num{-0.5, 0.5}, Groups: []string{"a", "b"},
						Units: []string{"u1", "u2"}, Values: []Num{0.5, 2.5}},
				},
				{ID: "ranks", Pos: "plan.yaml:80:9", Model: ModelSpec{Text: "kruskal-wallis: y by treatment", Kind: "kruskal-wallis"},
					Checks: []CheckResult{}, Unused: []UnusedRow{},
					Decision: Decision{Action: ActionSkip, Reason: ReasonNotReached, Detail: "an earlier step was accepted"}},
			},
			Hypotheses: []HypothesisResult{
				{ID: "vs-control", Pos: "plan.yaml:90:9", Kind: "versus-control", Step: "anova", Sides: "two-sided", Alpha: 0.05,
					Adjust: "dunnett", AdjustUsed: "dunnett", Assessable: true,
					Comparisons: []Comparison{{Label: "b - a", Level: "b", Against: "a", Estimate: 1, SE: 0.5, DF: 9,
						Statistic: 2, P: 0.07, PAdjusted: 0.13, Lower: -0.2, Upper: 2.2, Ratio: NaN, RatioLower: NaN, RatioUpper: NaN}}},
				{ID: "equiv", Pos: "plan.yaml:95:9", Kind: "equivalence", Step: "anova", Sides: "two-sided", Alpha: 0.05,
					Adjust: "none", AdjustUsed: "none", Assessable: true,
					Comparisons: []Comparison{{Label: "b - a", Level: "b", Against: "a", Estimate: 0.1, SE: 0.2, DF: 9,
						Statistic: 0.5, P: 0.01, PAdjusted: 0.01, Lower: -0.2, Upper: 0.4, Ratio: 1.1, RatioLower: 0.8, RatioUpper: 1.5,
						Equivalence: &EquivalenceResult{Lower: Num(math.Log(0.8)), Upper: Num(math.Log(1.25)), PLower: 0.01, PUpper: 0.02, Verdict: "equivalent"}}}},
				{ID: "trt", Pos: "plan.yaml:99:9", Kind: "term", Step: "anova", Sides: "two-sided", Alpha: 0.05, Adjust: "none",
					AdjustUsed: "none", Assessable: true,
					TermTest: &AnovaRow{Term: "treatment", Type: 3, DF: 2, SS: 30, MS: 15, F: Num(math.Inf(1)), DenDF: 9, P: 0}},
			},
		}},
	}
}

func TestRecordValidatesAgainstSchema(t *testing.T) {
	r := sampleResult()
	if err := Seal(r, nil); err != nil {
		t.Fatal(err)
	}
	b, err := EncodeRecord(r)
	if err != nil {
		t.Fatal(err)
	}
	if err := ValidateRecord(b); err != nil {
		t.Fatalf("sample record: %v", err)
	}
	// A record with an unknown member or a wrong enum code must not validate.
	bad := bytes.Replace(b, []byte(`"reason": "checks-passed"`), []byte(`"reason": "looked-nice"`), 1)
	if err := ValidateRecord(bad); err == nil {
		t.Error("record with an undeclared reason code validated")
	}
	bad = bytes.Replace(b, []byte(`"format": 1,`), []byte(`"format": 1, "extra": 2,`), 1)
	if err := ValidateRecord(bad); err == nil {
		t.Error("record with an unknown member validated")
	}
}

func TestRecordRoundTrip(t *testing.T) {
	r := sampleResult()
	if err := Seal(r, nil); err != nil {
		t.Fatal(err)
	}
	b, _ := EncodeRecord(r)
	var back Result
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	b2, _ := EncodeRecord(&back)
	if !bytes.Equal(b, b2) {
		t.Fatal("decoding and re-encoding a record changed its bytes")
	}
	if !strings.Contains(string(b), `"f": "Inf"`) || !strings.Contains(string(b), `"criterion": null`) {
		t.Error("non-finite numbers not written as documented")
	}
	if !strings.Contains(string(b), "test <trial> & co") {
		t.Error("HTML characters were escaped")
	}
}

func TestContentHash(t *testing.T) {
	r := sampleResult()
	if err := Seal(r, nil); err != nil {
		t.Fatal(err)
	}
	b, _ := EncodeRecord(r)
	h1, err := ContentHash(b)
	if err != nil {
		t.Fatal(err)
	}
	if h1 != r.Integrity.ContentHash {
		t.Fatalf("hash of the written record %s differs from the sealed hash %s", h1, r.Integrity.ContentHash)
	}
	// run_at, plan_location and layout are outside the hash.
	r2 := sampleResult()
	r2.RunAt = "2030-01-01T00:00:00Z"
	b2, _ := EncodeRecord(r2)
	if h2, _ := ContentHash(b2); h2 != h1 {
		t.Error("changing run_at changed the content hash")
	}
	r2 = sampleResult()
	r2.PlanLocation = "../../elsewhere/plan.yaml"
	b2, _ = EncodeRecord(r2)
	if h2, _ := ContentHash(b2); h2 != h1 {
		t.Error("changing plan_location changed the content hash")
	}
	var compact bytes.Buffer
	if err := json.Compact(&compact, b); err != nil {
		t.Fatal(err)
	}
	if h3, _ := ContentHash(compact.Bytes()); h3 != h1 {
		t.Error("whitespace changed the content hash")
	}
	// Any number changes it.
	r4 := sampleResult()
	r4.Endpoints[0].Steps[0].Checks[0].P = 0.4100000001
	b4, _ := EncodeRecord(r4)
	if h4, _ := ContentHash(b4); h4 == h1 {
		t.Error("changing a p-value did not change the content hash")
	}
	// The hash is SHA-256 of the documented canonical bytes: rebuild them by
	// hand for a tiny document, from the specification in doc.go.
	tiny := []byte("{\n \"b\": [1, 2.50],\n \"run_at\": \"x\", \"a\": {\"z\": null, \"y\": \"<\"},\n \"plan_location\": \"../p\", \"integrity\": {}\n}")
	want := SHA256Hex([]byte(`{"a":{"y":"<","z":null},"b":[1,2.50]}`))
	if got, _ := ContentHash(tiny); got != want {
		t.Errorf("canonical bytes: got %s, want %s", got, want)
	}
}

func TestEnumCodes(t *testing.T) {
	for _, c := range []struct {
		got, want string
	}{
		{ReasonChecksPassed.String(), "checks-passed"},
		{ReasonCheckFailed.String(), "check-failed"},
		{ReasonLastResortAssumptionsUnmet.String(), "last-resort-assumptions-unmet"},
		{ReasonNotReached.String(), "not-reached"},
		{ActionFallBack.String(), "fall-back"},
		{VerdictFail.String(), "fail"},
		{EndpointAssumptionsUnmet.String(), "assumptions-unmet"},
		{Reason(99).String(), "reason(99)"},
	} {
		if c.got != c.want {
			t.Errorf("code %q, want %q", c.got, c.want)
		}
	}
}
