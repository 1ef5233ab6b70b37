package plan

import (
	"path"
	"strings"
)

// Default values filled after decoding. They are part of the plan's
// meaning and so of its canonical form and hash.
const (
	DefaultAlpha     = 0.05
	DefaultAnova     = 3
	DefaultDecimal   = "."
	DefaultDelimiter = ","
)

// fillDefaults sets every value the plan left out to its documented
// default. It is run on a freshly decoded plan only.
func (p *Plan) fillDefaults(m Methods) {
	if p.Data.Format == "" {
		switch strings.ToLower(path.Ext(p.Data.File)) {
		case ".xlsx":
			p.Data.Format = "xlsx"
		case ".csv", ".txt", ".tsv":
			p.Data.Format = "csv"
		}
	}
	if p.Data.Format == "csv" && p.Data.Delimiter == "" {
		p.Data.Delimiter = DefaultDelimiter
	}
	if p.Data.Decimal == "" {
		p.Data.Decimal = DefaultDecimal
	}
	if p.Data.Missing == nil {
		p.Data.Missing = []string{""}
	}
	treatment := ""
	for _, c := range p.Columns {
		if c.Role == RoleTreatment {
			treatment = c.Name
			break
		}
	}
	for i := range p.Endpoints {
		e := &p.Endpoints[i]
		if e.Alpha == 0 {
			e.Alpha = DefaultAlpha
		}
		for j := range e.Steps {
			s := &e.Steps[j]
			if s.Outcome.Derive == "" {
				s.Outcome.Derive = DeriveRaw
			}
			if s.Transform.Kind == "" {
				s.Transform.Kind = TransformNone
			}
			if r, ok := m.Model(s.Model); ok {
				if s.DF == "" && len(r.DF) > 0 {
					s.DF = r.DF[0]
				}
				if s.Anova == 0 && r.Anova {
					s.Anova = DefaultAnova
				}
				if s.Estimation == "" && len(r.Estimation) > 0 {
					s.Estimation = r.Estimation[0]
				}
			}
			for k := range s.Checks {
				c := &s.Checks[k]
				if c.NotComputable == "" {
					c.NotComputable = e.NotComputable
				}
				if r, ok := m.Check(c.Test); ok && r.Grouped && c.By == nil && treatment != "" {
					c.By = []string{treatment}
				}
			}
		}
		for j := range e.Hypotheses {
			h := &e.Hypotheses[j]
			if h.Factor == "" && h.Kind != HypTerm {
				h.Factor = treatment
			}
			if h.Sides == "" {
				h.Sides = "two-sided"
			}
			if h.Better == "" && h.Kind == HypNonInferiority {
				h.Better = "higher"
			}
			if h.Alpha == 0 {
				h.Alpha = e.Alpha
			}
			if h.Estimate == "" && h.Kind != HypTerm {
				h.Estimate = EstimateMeanDifference
			}
			if h.Adjust == "" {
				switch h.Kind {
				case HypVersusControl:
					h.Adjust = AdjustDunnett
				case HypPairwise:
					h.Adjust = AdjustTukey
				default:
					h.Adjust = AdjustNone
				}
			}
		}
	}
}
