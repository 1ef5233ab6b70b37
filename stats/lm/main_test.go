package lm

import (
	"testing"

	"furrow/internal/testkit"
)

// TestMain reports reference checks skipped for want of the shared
// reference data.
func TestMain(m *testing.M) { testkit.Main(m) }
