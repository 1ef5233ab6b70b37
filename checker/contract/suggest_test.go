package contract

import (
	"slices"
	"strings"
	"testing"

	"furrow/plan"
)

func TestAbbreviates(t *testing.T) {
	for _, c := range []struct {
		short, long string
		want        bool
	}{
		{"trt", "treatment", true},   // contraction
		{"treat", "treatment", true}, // prefix
		{"rep", "replicate", true},
		{"yld", "yield", true},
		{"TRT", "Treatment", true}, // case is ignored
		{"plot", "plots", true},
		{"tr", "treatment", false},  // too short
		{"rtt", "treatment", false}, // another first letter
		{"ttr", "treatment", false}, // not in order
		{"treatment", "treatment", false},
		{"treatments", "treatment", false}, // longer
		{"blk", "yield", false},
	} {
		if got := abbreviates(c.short, c.long); got != c.want {
			t.Errorf("abbreviates(%q, %q) = %v, want %v", c.short, c.long, got, c.want)
		}
	}
}

// TestCheckDataColumnAbbreviations renames columns of the contract plan's
// file (header) or plan (declared) and checks the suggestion each column
// finding makes, for a declared column the file lacks and for the file's
// undeclared column.
func TestCheckDataColumnAbbreviations(t *testing.T) {
	cases := []struct {
		name     string
		header   map[string]string // file column -> the name the file uses
		declared map[string]string // declared column -> the name the plan uses
		want     []string          // the summaries of the column findings
	}{
		{
			name:   "contraction in the file",
			header: map[string]string{"treatment": "trt"},
			want: []string{
				`column "treatment" (treatment) declared in the plan is not in the data; did you mean "trt"?`,
				`column "trt" is not declared in the plan; it is carried along unchecked (is it the declared "treatment"?)`,
			},
		},
		{
			name:     "prefix in the file",
			header:   map[string]string{"block": "rep"},
			declared: map[string]string{"block": "replicate"},
			want: []string{
				`column "replicate" (block) declared in the plan is not in the data; did you mean "rep"?`,
				`column "rep" is not declared in the plan; it is carried along unchecked (is it the declared "replicate"?)`,
			},
		},
		{
			name:     "abbreviation in the plan",
			header:   map[string]string{"treatment": "Treatment_applied"},
			declared: map[string]string{"treatment": "treat"},
			want: []string{
				`column "treat" (treatment) declared in the plan is not in the data; did you mean "Treatment_applied"?`,
				`column "Treatment_applied" is not declared in the plan; it is carried along unchecked (is it the declared "treat"?)`,
			},
		},
		{
			name:   "a near spelling comes first",
			header: map[string]string{"treatment": "treatmnt", "yield": "trt"},
			want: []string{
				`column "treatment" (treatment) declared in the plan is not in the data; did you mean "treatmnt"?`,
				`column "yield" (response) declared in the plan is not in the data`,
				`column "treatmnt" is not declared in the plan; it is carried along unchecked (is it the declared "treatment"?)`,
				`column "trt" is not declared in the plan; it is carried along unchecked`,
			},
		},
		{
			name:   "two file abbreviations of one declared column",
			header: map[string]string{"treatment": "trt", "yield": "treat"},
			want: []string{
				`column "treatment" (treatment) declared in the plan is not in the data`,
				`column "yield" (response) declared in the plan is not in the data`,
				`column "trt" is not declared in the plan; it is carried along unchecked`,
				`column "treat" is not declared in the plan; it is carried along unchecked`,
			},
		},
		{
			name:     "one file abbreviation of two declared columns",
			header:   map[string]string{"treatment": "tre", "time": "x"},
			declared: map[string]string{"time": "trial_stage"},
			want: []string{
				`column "treatment" (treatment) declared in the plan is not in the data`,
				`column "trial_stage" (repeat) declared in the plan is not in the data`,
				`column "tre" is not declared in the plan; it is carried along unchecked`,
				`column "x" is not declared in the plan; it is carried along unchecked`,
			},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			text := contractCSV(nil)
			head, body, _ := strings.Cut(text, "\n")
			names := strings.Split(head, ",")
			for i, n := range names {
				if to, ok := c.header[n]; ok {
					names[i] = to
				}
			}
			ds, _ := checkCSV(t, strings.Join(names, ",")+"\n"+body, func(p *plan.Plan) {
				for i := range p.Columns {
					if to, ok := c.declared[p.Columns[i].Name]; ok {
						p.Columns[i].Name = to
					}
				}
			})
			var got []string
			for _, d := range ds {
				if d.Code == "data-column-missing" || d.Code == "data-column-undeclared" {
					got = append(got, d.Summary)
				}
			}
			if !slices.Equal(got, c.want) {
				t.Errorf("column findings:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(c.want, "\n"))
			}
		})
	}
}
