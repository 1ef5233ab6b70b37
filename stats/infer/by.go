package infer

import (
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"

	"furrow/stats/multcomp"
)

// Group is the part of a conditional means grid ("a | b") that belongs to
// one level of the by factors: the rows L of the means of a within that
// level and their labels (stats/design's MeansGridBy builds them).
type Group struct {
	By     string
	L      mat.Matrix
	Labels []string
}

// GroupEstimates are the estimates computed within one by level.
type GroupEstimates struct {
	By string
	// Means is the number of means of the group, the k of a Tukey
	// adjustment of its pairwise differences.
	Means     int
	Estimates []Estimate
}

// byGroups applies f to every group.
func byGroups(groups []Group, what string, f func(g Group) ([]Estimate, error)) ([]GroupEstimates, error) {
	if len(groups) == 0 {
		return nil, fmt.Errorf("%s: no groups", what)
	}
	out := make([]GroupEstimates, len(groups))
	for i, g := range groups {
		if g.L == nil {
			return nil, fmt.Errorf("%s: group %q has no grid", what, g.By)
		}
		es, err := f(g)
		if err != nil {
			if g.By == "" {
				return nil, err
			}
			return nil, fmt.Errorf("within %s: %w", g.By, err)
		}
		out[i] = GroupEstimates{By: g.By, Means: len(g.Labels), Estimates: es}
	}
	return out, nil
}

// MeansBy returns the conditional marginal means of every group (the
// means of a at each level of b, the other factors averaged with equal
// weights), each with its SE, df, t, p and interval as MarginalMeans.
func MeansBy(m Model, groups []Group, opt Options) ([]GroupEstimates, error) {
	return byGroups(groups, "conditional means", func(g Group) ([]Estimate, error) {
		return MarginalMeans(m, g.L, g.Labels, opt)
	})
}

// PairwiseBy returns the simple effects of a within each level of b as
// all pairwise differences of the group's means (Pairwise within every
// group).
func PairwiseBy(m Model, groups []Group, opt Options) ([]GroupEstimates, error) {
	return byGroups(groups, "pairwise comparisons by group", func(g Group) ([]Estimate, error) {
		return Pairwise(m, g.L, g.Labels, opt)
	})
}

// VersusControlBy returns the simple effects of a within each level of b
// as the differences of every mean from the mean of the row labelled
// control (VersusControl within every group).
func VersusControlBy(m Model, groups []Group, control string, opt Options) ([]GroupEstimates, error) {
	return byGroups(groups, "comparisons with control by group", func(g Group) ([]Estimate, error) {
		c := indexOf(g.Labels, control)
		if c < 0 {
			return nil, fmt.Errorf("comparisons with control: control %q is not a row of the grid", control)
		}
		return VersusControl(m, g.L, g.Labels, c, opt)
	})
}

// Scope says which estimates of a conditional analysis form one family
// for a multiplicity adjustment.
type Scope int

const (
	// PerGroup adjusts within each by level separately (emmeans' default
	// for by groups): each level's comparisons are a family.
	PerGroup Scope = iota
	// AcrossGroups adjusts all comparisons of all levels as one family
	// (emmeans' by = NULL).
	AcrossGroups
)

// String returns "per group" or "across groups".
func (s Scope) String() string {
	switch s {
	case PerGroup:
		return "per group"
	case AcrossGroups:
		return "across groups"
	}
	return fmt.Sprintf("Scope(%d)", int(s))
}

// AdjustBy applies a multiplicity adjustment (Adjust) to the estimates of
// every group, within each group or across all groups, and returns one
// Adjusted per group in the order of groups either way. Across groups
// every group's Adjusted carries the family's method, critical value and
// df. Tukey's adjustment is for the pairwise differences of one set of
// means and is refused across groups; the Dunnett adjustment, the
// single-step multivariate t of the rows' joint correlation, takes any
// rows and so serves across groups too.
func AdjustBy(m Model, groups []GroupEstimates, method multcomp.Method, scope Scope) ([]*Adjusted, error) {
	if len(groups) == 0 {
		return nil, errors.New("adjusting by group: no groups")
	}
	out := make([]*Adjusted, len(groups))
	switch scope {
	case PerGroup:
		for i, g := range groups {
			a, err := Adjust(m, g.Estimates, method, g.Means)
			if err != nil {
				return nil, fmt.Errorf("adjusting within %s: %w", g.By, err)
			}
			out[i] = a
		}
		return out, nil
	case AcrossGroups:
		if method == MethodTukey {
			return nil, errors.New("adjusting across groups: tukey's adjustment is for the pairwise differences of one set of means; across groups use dunnett (multivariate t), bonferroni or holm")
		}
		var all []Estimate
		for _, g := range groups {
			all = append(all, g.Estimates...)
		}
		a, err := Adjust(m, all, method, 0)
		if err != nil {
			return nil, fmt.Errorf("adjusting across groups: %w", err)
		}
		at := 0
		for i, g := range groups {
			n := len(g.Estimates)
			out[i] = &Adjusted{
				Method:    a.Method,
				Estimates: g.Estimates,
				PAdjusted: a.PAdjusted[at : at+n : at+n],
				Lower:     a.Lower[at : at+n : at+n],
				Upper:     a.Upper[at : at+n : at+n],
				Critical:  a.Critical,
				DF:        a.DF,
			}
			at += n
		}
		return out, nil
	}
	return nil, fmt.Errorf("adjusting by group: unknown scope %d", int(scope))
}

func indexOf(list []string, s string) int {
	for i, l := range list {
		if l == s {
			return i
		}
	}
	return -1
}
