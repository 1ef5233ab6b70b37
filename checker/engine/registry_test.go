package engine

import (
	"slices"
	"testing"

	"furrow/checker/method"
)

// TestEveryModelKindHasAFit: the engine fits exactly the model kinds of
// the registry.
func TestEveryModelKindHasAFit(t *testing.T) {
	fits := modelFitters()
	var got []string
	for name := range fits {
		got = append(got, name)
	}
	slices.Sort(got)
	want := method.Default.Models()
	slices.Sort(want)
	if !slices.Equal(got, want) {
		t.Errorf("engine fits %v, registry has %v", got, want)
	}
}
