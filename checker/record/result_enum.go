package record

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
)

// Stable codes of the enums as written to the record. Codes never change
// meaning; new values get new codes.
var (
	endpointStatusCodes = []string{"accepted", "assumptions-unmet", "failed", "stopped"}
	verdictCodes        = []string{"pass", "fail", "error", "not-run"}
	actionCodes         = []string{"accept", "fall-back", "report-unmet", "stop", "skip"}
	reasonCodes         = []string{"checks-passed", "no-checks", "check-failed", "fit-failed",
		"last-resort-assumptions-unmet", "last-resort-fit-failed", "not-reached", "check-not-computable"}
)

func enumString(codes []string, i int, kind string) string {
	if i >= 0 && i < len(codes) {
		return codes[i]
	}
	return fmt.Sprintf("%s(%d)", kind, i)
}

func enumParse(codes []string, b []byte, kind string) (int, error) {
	var s string
	if err := json.Unmarshal(b, &s); err != nil {
		return 0, fmt.Errorf("%s: %w", kind, err)
	}
	for i, c := range codes {
		if c == s {
			return i, nil
		}
	}
	return 0, fmt.Errorf("unknown %s %q", kind, s)
}

// String returns the stable code ("accepted", "assumptions-unmet", "failed").
func (s EndpointStatus) String() string { return enumString(endpointStatusCodes, int(s), "status") }

// MarshalJSON writes the stable code.
func (s EndpointStatus) MarshalJSON() ([]byte, error) { return json.Marshal(s.String()) }

// UnmarshalJSON reads the stable code.
func (s *EndpointStatus) UnmarshalJSON(b []byte) error {
	i, err := enumParse(endpointStatusCodes, b, "endpoint status")
	*s = EndpointStatus(i)
	return err
}

// String returns the stable code ("pass", "fail", "error", "not-run").
func (v Verdict) String() string { return enumString(verdictCodes, int(v), "verdict") }

// MarshalJSON writes the stable code.
func (v Verdict) MarshalJSON() ([]byte, error) { return json.Marshal(v.String()) }

// UnmarshalJSON reads the stable code.
func (v *Verdict) UnmarshalJSON(b []byte) error {
	i, err := enumParse(verdictCodes, b, "verdict")
	*v = Verdict(i)
	return err
}

// String returns the stable code ("accept", "fall-back", "report-unmet", "stop", "skip").
func (a Action) String() string { return enumString(actionCodes, int(a), "action") }

// MarshalJSON writes the stable code.
func (a Action) MarshalJSON() ([]byte, error) { return json.Marshal(a.String()) }

// UnmarshalJSON reads the stable code.
func (a *Action) UnmarshalJSON(b []byte) error {
	i, err := enumParse(actionCodes, b, "action")
	*a = Action(i)
	return err
}

// String returns the stable code, e.g. "checks-passed" or "check-failed".
func (r Reason) String() string { return enumString(reasonCodes, int(r), "reason") }

// MarshalJSON writes the stable code.
func (r Reason) MarshalJSON() ([]byte, error) { return json.Marshal(r.String()) }

// UnmarshalJSON reads the stable code.
func (r *Reason) UnmarshalJSON(b []byte) error {
	i, err := enumParse(reasonCodes, b, "reason")
	*r = Reason(i)
	return err
}

// Num is a float64 that survives JSON: finite values are written in Go's
// shortest round-trip form ('g' with exponent for very large or small
// magnitudes), NaN as null, and the infinities as the strings "Inf" and
// "-Inf". A null reads back as NaN.
type Num float64

// NaN is the Num for a value that is not available.
var NaN = Num(math.NaN())

// MarshalJSON writes the number as described on Num.
func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	switch {
	case math.IsNaN(f):
		return []byte("null"), nil
	case math.IsInf(f, 1):
		return []byte(`"Inf"`), nil
	case math.IsInf(f, -1):
		return []byte(`"-Inf"`), nil
	}
	if f == 0 {
		return []byte("0"), nil // also folds -0 into 0
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 64), nil
}

// UnmarshalJSON reads what MarshalJSON writes.
func (n *Num) UnmarshalJSON(b []byte) error {
	switch string(b) {
	case "null":
		*n = NaN
		return nil
	case `"Inf"`:
		*n = Num(math.Inf(1))
		return nil
	case `"-Inf"`:
		*n = Num(math.Inf(-1))
		return nil
	}
	f, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		return fmt.Errorf("number %s: %w", b, err)
	}
	*n = Num(f)
	return nil
}

// Nums converts a float slice; nil stays nil.
func Nums(xs []float64) []Num {
	if xs == nil {
		return nil
	}
	out := make([]Num, len(xs))
	for i, x := range xs {
		out[i] = Num(x)
	}
	return out
}
