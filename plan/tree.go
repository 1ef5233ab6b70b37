package plan

import (
	"strconv"

	"gopkg.in/yaml.v3"
)

// treeDecoder turns a schema-valid YAML tree into a Plan, recording the
// position of every value under its data path. It is written so that no
// tree can make it panic, schema-valid or not: a value of an unexpected
// kind decodes as the zero value.
type treeDecoder struct {
	file  string
	where map[string]Pos
}

func decode(file string, doc *yaml.Node) *Plan {
	d := &treeDecoder{file: file, where: map[string]Pos{}}
	p := &Plan{Path: file, Where: d.where}
	if doc == nil || len(doc.Content) == 0 {
		return p
	}
	root := doc.Content[0]
	p.Pos = d.pos(root)
	d.where[""] = p.Pos
	for k, v := range d.members(root, "") {
		path := k
		switch k {
		case "furrow":
			p.Format = int(d.num(v))
		case "trial":
			p.Trial = d.trial(v, path)
		case "data":
			p.Data = d.data(v, path)
		case "columns":
			for i, e := range d.items(v, path) {
				p.Columns = append(p.Columns, d.column(e, index(path, i)))
			}
		case "design":
			p.Design = d.design(v, path)
		case "exclusions":
			for i, e := range d.items(v, path) {
				p.Exclusions = append(p.Exclusions, d.exclusion(e, index(path, i)))
			}
		case "derived":
			for i, e := range d.items(v, path) {
				p.Derived = append(p.Derived, d.derived(e, index(path, i)))
			}
		case "endpoints":
			for i, e := range d.items(v, path) {
				p.Endpoints = append(p.Endpoints, d.endpoint(e, index(path, i)))
			}
		}
	}
	return p
}

func index(path string, i int) string { return path + "[" + strconv.Itoa(i) + "]" }

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

func (d *treeDecoder) pos(n *yaml.Node) Pos {
	return Pos{File: d.file, Line: n.Line, Column: n.Column}
}

// member is one key of a mapping, in document order.
type member struct {
	key string
	val *yaml.Node
}

// members iterates over a mapping's keys in document order and records
// each value's position under path.key.
func (d *treeDecoder) members(n *yaml.Node, path string) func(func(string, *yaml.Node) bool) {
	return func(yield func(string, *yaml.Node) bool) {
		if n == nil || n.Kind != yaml.MappingNode {
			return
		}
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			d.where[join(path, k.Value)] = d.pos(v)
			if !yield(k.Value, v) {
				return
			}
		}
	}
}

func (d *treeDecoder) items(n *yaml.Node, path string) []*yaml.Node {
	if n == nil || n.Kind != yaml.SequenceNode {
		return nil
	}
	for i, e := range n.Content {
		d.where[index(path, i)] = d.pos(e)
	}
	return n.Content
}

func (d *treeDecoder) str(n *yaml.Node) string {
	if n == nil || n.Kind != yaml.ScalarNode || n.ShortTag() == "!!null" {
		return ""
	}
	return n.Value
}

func (d *treeDecoder) num(n *yaml.Node) float64 {
	if n == nil || n.Kind != yaml.ScalarNode {
		return 0
	}
	var f float64
	if err := n.Decode(&f); err != nil {
		f, _ = strconv.ParseFloat(n.Value, 64)
	}
	return f
}

func (d *treeDecoder) numPtr(n *yaml.Node) *float64 {
	f := d.num(n)
	return &f
}

func (d *treeDecoder) boolean(n *yaml.Node) bool {
	var b bool
	if n != nil && n.Kind == yaml.ScalarNode {
		_ = n.Decode(&b)
	}
	return b
}

func (d *treeDecoder) strs(n *yaml.Node, path string) []string {
	var out []string
	for _, e := range d.items(n, path) {
		out = append(out, d.str(e))
	}
	if out == nil && n != nil && n.Kind == yaml.SequenceNode {
		out = []string{}
	}
	return out
}

func (d *treeDecoder) term(n *yaml.Node, path string) Term {
	t := Term{Pos: d.pos(n)}
	if n.Kind == yaml.SequenceNode {
		t.Columns = d.strs(n, path)
	} else {
		t.Columns = []string{d.str(n)}
	}
	return t
}

func (d *treeDecoder) terms(n *yaml.Node, path string) []Term {
	var out []Term
	for i, e := range d.items(n, path) {
		out = append(out, d.term(e, index(path, i)))
	}
	return out
}

func (d *treeDecoder) trial(n *yaml.Node, path string) Trial {
	t := Trial{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "id":
			t.ID = d.str(v)
		case "title":
			t.Title = d.str(v)
		case "sponsor":
			t.Sponsor = d.str(v)
		case "analyst":
			t.Analyst = d.str(v)
		case "version":
			t.Version = d.str(v)
		case "amendments":
			ap := join(path, k)
			for i, e := range d.items(v, ap) {
				a := Amendment{Pos: d.pos(e)}
				for ak, av := range d.members(e, index(ap, i)) {
					switch ak {
					case "version":
						a.Version = d.str(av)
					case "date":
						a.Date = d.str(av)
					case "reason":
						a.Reason = d.str(av)
					case "changes":
						a.Changes = d.str(av)
					}
				}
				t.Amendments = append(t.Amendments, a)
			}
		}
	}
	return t
}

func (d *treeDecoder) data(n *yaml.Node, path string) DataSource {
	s := DataSource{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "file":
			s.File = d.str(v)
		case "format":
			s.Format = d.str(v)
		case "sheet":
			s.Sheet = d.str(v)
		case "delimiter":
			s.Delimiter = d.str(v)
		case "decimal":
			s.Decimal = d.str(v)
		case "missing":
			s.Missing = d.strs(v, join(path, k))
		}
	}
	return s
}

func (d *treeDecoder) column(n *yaml.Node, path string) Column {
	c := Column{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "name":
			c.Name = d.str(v)
		case "role":
			c.Role = d.str(v)
		case "label":
			c.Label = d.str(v)
		case "unit":
			c.Unit = d.str(v)
		case "min":
			c.Min = d.numPtr(v)
		case "max":
			c.Max = d.numPtr(v)
		case "levels":
			c.Levels = d.strs(v, join(path, k))
		case "control":
			c.Control = d.str(v)
		}
	}
	return c
}

func (d *treeDecoder) design(n *yaml.Node, path string) Design {
	g := Design{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "layout":
			g.Layout = d.str(v)
		case "replicates":
			g.Replicates = int(d.num(v))
		case "subsamples":
			g.Subsamples = int(d.num(v))
		case "least-units":
			g.LeastUnits = d.leastUnits(v, join(path, k))
		}
	}
	return g
}

func (d *treeDecoder) leastUnits(n *yaml.Node, path string) *LeastUnits {
	l := &LeastUnits{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "per":
			l.Per = d.str(v)
		case "count":
			l.Count = int(d.num(v))
		case "below":
			l.Below = d.str(v)
		}
	}
	return l
}

func (d *treeDecoder) exclusion(n *yaml.Node, path string) Exclusion {
	e := Exclusion{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "id":
			e.ID = d.str(v)
		case "drop":
			e.Drop = d.str(v)
		case "when":
			e.When = d.str(v)
		case "column":
			e.Column = d.str(v)
		case "at":
			e.At = d.str(v)
		case "units":
			e.Units = d.strs(v, join(path, k))
		case "reason":
			e.Reason = d.str(v)
		}
	}
	return e
}

func (d *treeDecoder) endpoint(n *yaml.Node, path string) Endpoint {
	e := Endpoint{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "id":
			e.ID = d.str(v)
		case "response":
			e.Response = d.str(v)
		case "primary":
			e.Primary = d.boolean(v)
		case "alpha":
			e.Alpha = d.num(v)
		case "not-computable":
			e.NotComputable = d.str(v)
		case "steps":
			sp := join(path, k)
			for i, s := range d.items(v, sp) {
				e.Steps = append(e.Steps, d.step(s, index(sp, i)))
			}
		case "hypotheses":
			hp := join(path, k)
			for i, h := range d.items(v, hp) {
				e.Hypotheses = append(e.Hypotheses, d.hypothesis(h, index(hp, i)))
			}
		}
	}
	return e
}

func (d *treeDecoder) step(n *yaml.Node, path string) Step {
	s := Step{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		kp := join(path, k)
		switch k {
		case "id":
			s.ID = d.str(v)
		case "model":
			s.Model = d.str(v)
		case "outcome":
			s.Outcome.Pos = d.pos(v)
			for ok, ov := range d.members(v, kp) {
				switch ok {
				case "derive":
					s.Outcome.Derive = d.str(ov)
				case "from":
					s.Outcome.From = d.str(ov)
				case "to":
					s.Outcome.To = d.str(ov)
				case "at":
					s.Outcome.At = d.str(ov)
				}
			}
		case "transform":
			s.Transform.Pos = d.pos(v)
			for tk, tv := range d.members(v, kp) {
				switch tk {
				case "kind":
					s.Transform.Kind = d.str(tv)
				case "offset":
					s.Transform.Offset = d.num(tv)
					s.Transform.HasOffset = true
				case "lambda":
					s.Transform.Lambda = d.num(tv)
					s.Transform.HasLambda = true
				}
			}
		case "fixed":
			s.Fixed = d.terms(v, kp)
		case "random":
			s.Random = d.terms(v, kp)
		case "covariates":
			s.Covariates = d.strs(v, kp)
		case "compare":
			s.Compare = d.str(v)
		case "within":
			s.Within = d.str(v)
		case "estimation":
			s.Estimation = d.str(v)
		case "df":
			s.DF = d.str(v)
		case "anova":
			s.Anova = int(d.num(v))
		case "checks":
			for i, c := range d.items(v, kp) {
				s.Checks = append(s.Checks, d.check(c, index(kp, i)))
			}
		case "on-fail":
			s.OnFail = d.str(v)
		case "answers":
			for i, a := range d.items(v, kp) {
				s.Answers = append(s.Answers, d.answer(a, index(kp, i)))
			}
		}
	}
	return s
}

func (d *treeDecoder) answer(n *yaml.Node, path string) Answer {
	a := Answer{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "hypothesis":
			a.Hypothesis = d.str(v)
		case "adjust":
			a.Adjust = d.str(v)
		case "estimate":
			a.Estimate = d.str(v)
		case "omit":
			a.Omit = d.str(v)
		}
	}
	return a
}

func (d *treeDecoder) check(n *yaml.Node, path string) Check {
	c := Check{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		switch k {
		case "test":
			c.Test = d.str(v)
		case "by":
			c.By = d.strs(v, join(path, k))
		case "fail-below":
			c.FailBelow = d.num(v)
		case "on-fail":
			c.OnFail = d.str(v)
		case "not-computable":
			c.NotComputable = d.str(v)
		}
	}
	return c
}

func (d *treeDecoder) hypothesis(n *yaml.Node, path string) Hypothesis {
	h := Hypothesis{Pos: d.pos(n)}
	for k, v := range d.members(n, path) {
		kp := join(path, k)
		switch k {
		case "id":
			h.ID = d.str(v)
		case "kind":
			h.Kind = d.str(v)
		case "factor":
			h.Factor = d.str(v)
		case "levels":
			h.Levels = d.strs(v, kp)
		case "pairs":
			for i, pr := range d.items(v, kp) {
				h.Pairs = append(h.Pairs, d.strs(pr, index(kp, i)))
			}
		case "test":
			h.Test = d.str(v)
		case "against":
			h.Against = d.str(v)
		case "term":
			h.Term = d.term(v, kp).Columns
		case "margin":
			m := &Margin{Pos: d.pos(v)}
			for mk, mv := range d.members(v, kp) {
				switch mk {
				case "scale":
					m.Scale = d.str(mv)
				case "lower":
					m.Lower, m.HasLower = d.num(mv), true
				case "upper":
					m.Upper, m.HasUpper = d.num(mv), true
				}
			}
			h.Margin = m
		case "sides":
			h.Sides = d.str(v)
		case "better":
			h.Better = d.str(v)
		case "alpha":
			h.Alpha = d.num(v)
		case "adjust":
			h.Adjust = d.str(v)
		case "estimate":
			h.Estimate = d.str(v)
		}
	}
	return h
}
