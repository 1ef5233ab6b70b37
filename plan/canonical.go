package plan

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
)

// Canonical returns the canonical form of the plan's meaning: a JSON
// object, without whitespace, whose keys are the plan's YAML keys in the
// fixed order documented in the package doc (section "Canonical form"),
// with defaults filled and positions, comments, quoting, layout and key
// order of the source dropped. Every key is always present: absent lists
// are [], absent numbers without a default are null, absent text is "".
// Numbers are formatted as Go's encoding/json formats float64 (the
// ECMAScript shortest round-trip form). p is not modified.
func Canonical(p *Plan) []byte {
	if p == nil {
		return []byte("null")
	}
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(canonicalPlan(p)); err != nil {
		// Only non-finite numbers can fail, and the decoder refuses them;
		// a plan built in code with NaN is a programming error.
		panic("plan: canonical form: " + err.Error())
	}
	return bytes.TrimSuffix(buf.Bytes(), []byte("\n"))
}

// Hash returns "sha256:" followed by the lower-case hex SHA-256 digest of
// Canonical(p).
func Hash(p *Plan) string {
	sum := sha256.Sum256(Canonical(p))
	return "sha256:" + hex.EncodeToString(sum[:])
}

type cPlan struct {
	Furrow     int          `json:"furrow"`
	Trial      cTrial       `json:"trial"`
	Data       cData        `json:"data"`
	Columns    []cColumn    `json:"columns"`
	Design     cDesign      `json:"design"`
	Exclusions []cExclusion `json:"exclusions"`
	Endpoints  []cEndpoint  `json:"endpoints"`
	Derived    []cDerived   `json:"derived,omitempty"`
}

type cTrial struct {
	ID         string       `json:"id"`
	Title      string       `json:"title"`
	Sponsor    string       `json:"sponsor"`
	Analyst    string       `json:"analyst"`
	Version    string       `json:"version"`
	Amendments []cAmendment `json:"amendments"`
}

type cAmendment struct {
	Version string `json:"version"`
	Date    string `json:"date"`
	Reason  string `json:"reason"`
	Changes string `json:"changes"`
}

type cData struct {
	File      string   `json:"file"`
	Format    string   `json:"format"`
	Sheet     string   `json:"sheet"`
	Delimiter string   `json:"delimiter"`
	Decimal   string   `json:"decimal"`
	Missing   []string `json:"missing"`
}

type cColumn struct {
	Name    string   `json:"name"`
	Role    string   `json:"role"`
	Label   string   `json:"label"`
	Unit    string   `json:"unit"`
	Min     *float64 `json:"min"`
	Max     *float64 `json:"max"`
	Levels  []string `json:"levels"`
	Control string   `json:"control"`
}

type cDesign struct {
	Layout     string       `json:"layout"`
	Replicates int          `json:"replicates"`
	Subsamples int          `json:"subsamples"`
	LeastUnits *cLeastUnits `json:"least-units,omitempty"`
}

type cLeastUnits struct {
	Per   string `json:"per"`
	Count int    `json:"count"`
	Below string `json:"below"`
}

type cExclusion struct {
	ID     string   `json:"id"`
	Drop   string   `json:"drop"`
	When   string   `json:"when"`
	Column string   `json:"column"`
	At     string   `json:"at"`
	Units  []string `json:"units"`
	Reason string   `json:"reason"`
}

type cEndpoint struct {
	ID         string        `json:"id"`
	Response   string        `json:"response"`
	Primary    bool          `json:"primary"`
	Alpha      float64       `json:"alpha"`
	NotComp    string        `json:"not-computable,omitempty"`
	Steps      []cStep       `json:"steps"`
	Hypotheses []cHypothesis `json:"hypotheses"`
}

type cOutcome struct {
	Derive string `json:"derive"`
	From   string `json:"from"`
	To     string `json:"to"`
	At     string `json:"at"`
}

type cTransform struct {
	Kind   string   `json:"kind"`
	Offset *float64 `json:"offset"`
	Lambda *float64 `json:"lambda"`
}

type cCheck struct {
	Test      string   `json:"test"`
	By        []string `json:"by"`
	FailBelow float64  `json:"fail-below"`
	OnFail    string   `json:"on-fail"`
	NotComp   string   `json:"not-computable,omitempty"`
}

type cAnswer struct {
	Hypothesis string `json:"hypothesis"`
	Adjust     string `json:"adjust,omitempty"`
	Estimate   string `json:"estimate,omitempty"`
	Omit       string `json:"omit,omitempty"`
}

type cStep struct {
	ID         string     `json:"id"`
	Model      string     `json:"model"`
	Outcome    cOutcome   `json:"outcome"`
	Transform  cTransform `json:"transform"`
	Fixed      [][]string `json:"fixed"`
	Random     [][]string `json:"random"`
	Covariates []string   `json:"covariates"`
	Compare    string     `json:"compare"`
	Within     string     `json:"within"`
	Estimation string     `json:"estimation"`
	DF         string     `json:"df"`
	Anova      int        `json:"anova"`
	Checks     []cCheck   `json:"checks"`
	OnFail     string     `json:"on-fail"`
	Answers    []cAnswer  `json:"answers,omitempty"`
}

type cMargin struct {
	Scale string   `json:"scale"`
	Lower *float64 `json:"lower"`
	Upper *float64 `json:"upper"`
}

type cHypothesis struct {
	ID      string     `json:"id"`
	Kind    string     `json:"kind"`
	Factor  string     `json:"factor"`
	Levels  []string   `json:"levels"`
	Pairs   [][]string `json:"pairs"`
	Test    string     `json:"test"`
	Against string     `json:"against"`
	Term    []string   `json:"term"`
	Margin  *cMargin   `json:"margin"`
	Sides   string     `json:"sides"`
	Better  string     `json:"better"`
	Alpha   float64    `json:"alpha"`
	Adjust  string     `json:"adjust"`
	Est     string     `json:"estimate,omitempty"`
}

func strList(xs []string) []string {
	if xs == nil {
		return []string{}
	}
	return append([]string{}, xs...)
}

func termList(ts []Term) [][]string {
	out := make([][]string, 0, len(ts))
	for _, t := range ts {
		out = append(out, strList(t.Columns))
	}
	return out
}

func floatPtr(x *float64) *float64 {
	if x == nil {
		return nil
	}
	v := *x
	return &v
}

func canonicalPlan(p *Plan) cPlan {
	c := cPlan{
		Furrow: p.Format,
		Trial: cTrial{ID: p.Trial.ID, Title: p.Trial.Title, Sponsor: p.Trial.Sponsor, Analyst: p.Trial.Analyst,
			Version: p.Trial.Version, Amendments: []cAmendment{}},
		Data: cData{File: p.Data.File, Format: p.Data.Format, Sheet: p.Data.Sheet, Delimiter: p.Data.Delimiter,
			Decimal: p.Data.Decimal, Missing: strList(p.Data.Missing)},
		Columns:    []cColumn{},
		Design:     cDesign{Layout: p.Design.Layout, Replicates: p.Design.Replicates, Subsamples: p.Design.Subsamples},
		Exclusions: []cExclusion{},
		Endpoints:  []cEndpoint{},
	}
	if l := p.Design.LeastUnits; l != nil {
		c.Design.LeastUnits = &cLeastUnits{Per: l.Per, Count: l.Count, Below: l.Below}
	}
	for _, a := range p.Trial.Amendments {
		c.Trial.Amendments = append(c.Trial.Amendments, cAmendment{a.Version, a.Date, a.Reason, a.Changes})
	}
	for _, col := range p.Columns {
		c.Columns = append(c.Columns, cColumn{Name: col.Name, Role: col.Role, Label: col.Label, Unit: col.Unit,
			Min: floatPtr(col.Min), Max: floatPtr(col.Max), Levels: strList(col.Levels), Control: col.Control})
	}
	c.Derived = canonicalDerived(p)
	for _, e := range p.Exclusions {
		c.Exclusions = append(c.Exclusions, cExclusion{ID: e.ID, Drop: e.Drop, When: e.When, Column: e.Column,
			At: e.At, Units: strList(e.Units), Reason: e.Reason})
	}
	for _, e := range p.Endpoints {
		ce := cEndpoint{ID: e.ID, Response: e.Response, Primary: e.Primary, Alpha: e.Alpha, NotComp: e.NotComputable, Steps: []cStep{}, Hypotheses: []cHypothesis{}}
		for _, s := range e.Steps {
			cs := cStep{ID: s.ID, Model: s.Model,
				Outcome:    cOutcome{s.Outcome.Derive, s.Outcome.From, s.Outcome.To, s.Outcome.At},
				Transform:  cTransform{Kind: s.Transform.Kind},
				Fixed:      termList(s.Fixed),
				Random:     termList(s.Random),
				Covariates: strList(s.Covariates),
				Compare:    s.Compare, Within: s.Within, Estimation: s.Estimation, DF: s.DF, Anova: s.Anova,
				Checks: []cCheck{}, OnFail: s.OnFail}
			if s.Transform.HasOffset || s.Transform.Offset != 0 {
				cs.Transform.Offset = floatPtr(&s.Transform.Offset)
			}
			if s.Transform.HasLambda || s.Transform.Lambda != 0 {
				cs.Transform.Lambda = floatPtr(&s.Transform.Lambda)
			}
			for _, ch := range s.Checks {
				cs.Checks = append(cs.Checks, cCheck{Test: ch.Test, By: strList(ch.By), FailBelow: ch.FailBelow, OnFail: ch.OnFail, NotComp: ch.NotComputable})
			}
			for _, a := range s.Answers {
				cs.Answers = append(cs.Answers, cAnswer{Hypothesis: a.Hypothesis, Adjust: a.Adjust, Estimate: a.Estimate, Omit: a.Omit})
			}
			ce.Steps = append(ce.Steps, cs)
		}
		for _, h := range e.Hypotheses {
			ch := cHypothesis{ID: h.ID, Kind: h.Kind, Factor: h.Factor, Levels: strList(h.Levels), Pairs: [][]string{},
				Test: h.Test, Against: h.Against, Term: strList(h.Term), Sides: h.Sides, Better: h.Better,
				Alpha: h.Alpha, Adjust: h.Adjust, Est: h.Estimate}
			for _, pr := range h.Pairs {
				ch.Pairs = append(ch.Pairs, strList(pr))
			}
			if m := h.Margin; m != nil {
				cm := &cMargin{Scale: m.Scale}
				if m.HasLower || m.Lower != 0 {
					cm.Lower = floatPtr(&m.Lower)
				}
				if m.HasUpper || m.Upper != 0 {
					cm.Upper = floatPtr(&m.Upper)
				}
				ch.Margin = cm
			}
			ce.Hypotheses = append(ce.Hypotheses, ch)
		}
		c.Endpoints = append(c.Endpoints, ce)
	}
	return c
}
