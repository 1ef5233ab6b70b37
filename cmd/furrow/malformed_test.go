package main

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"strconv"
	"strings"
	"testing"
	"time"

	"furrow/internal/testkit"
)

// TestMalformedInputs runs every malformed input furrow has through
// "furrow check", in this process: the committed plan fixtures
// (testdata/plans), the committed data fixtures (testdata/data), the seed
// corpora of the fuzz targets, the inputs made in malformed_gen_test.go
// (hostile CSV and XLSX files, named pipes, devices, links out of the
// folder) and mutations of a sound plan. For each it requires:
//
//   - no panic;
//   - exit 0, 1 or 2, and a clear message: with exit 1, every finding is
//     positioned (file, and line and column where there are some) and
//     carries a code; with exit 2, one line that names the file; no line
//     longer than 2000 bytes and no Go internals ("goroutine", "%!",
//     "<nil>", "runtime error");
//   - memory within bound: the bytes allocated while checking it (the
//     runtime's TotalAlloc, which bounds the peak from above) at most
//     256 MiB plus 64 times the input's size.
//
// Hangs are not timed (a read that blocks fails the test by go test's own
// timeout). The figures are printed with t.Logf (go test -v -run
// TestMalformedInputs ./cmd/furrow).
func TestMalformedInputs(t *testing.T) {
	if testing.Short() {
		t.Skip("the malformed inputs take a while; not in -short")
	}
	root, err := filepath.Abs(filepath.Join("..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	tmp := t.TempDir()
	var cases []malformedCase
	kinds := map[string]int{}
	addKind := func(kind string, cs []malformedCase) {
		kinds[kind] += len(cs)
		cases = append(cases, cs...)
	}
	addKind("plan fixtures", planFixtureCases(t, root))
	addKind("data fixtures", dataFixtureCases(t, root))
	addKind("fuzz seeds", fuzzSeedCases(t, root, filepath.Join(tmp, "seeds")))
	addKind("generated", generatedCases(t, filepath.Join(tmp, "gen")))
	addKind("plan mutations", mutationCases(t, filepath.Join(tmp, "mut")))

	var panics, unclear, oom, tried, accepted int
	var worst float64
	worstName := ""
	for _, c := range cases {
		out, code, alloc, panicked := checkCase(t, c)
		if panicked != "" {
			panics++
			t.Errorf("%s: panic: %s", c.name, panicked)
			continue
		}
		limit := uint64(256<<20) + 64*uint64(c.bytes)
		if alloc > limit {
			oom++
			t.Errorf("%s: %d MiB allocated, over the bound of %d MiB", c.name, alloc>>20, limit>>20)
		}
		if r := float64(alloc) / float64(max(c.bytes, 1)); c.bytes > 1<<20 && r > worst {
			worst, worstName = r, c.name
		}
		if code == exitOK && !strings.Contains(out, ": warning: ") {
			accepted++ // a mutation or a damaged byte that leaves the input sound
			continue
		}
		tried++
		if code == exitOK {
			code = exitFindings // warnings alone exit 0; they are findings all the same
		}
		if why := unclearWhy(out, code); why != "" {
			unclear++
			t.Errorf("%s: unclear (%s):\n%.2000s", c.name, why, out)
		}
	}
	t.Logf("inputs run: %d (%s)", len(cases), kindList(kinds))
	t.Logf("malformed inputs tried: %d (refused, or with findings); accepted as sound: %d (mutations and damaged bytes that leave the input sound)", tried, accepted)
	t.Logf("panics: %d, hangs: 0 (every check returned), out-of-memory: %d (allocation over the bound), unclear messages: %d", panics, oom, unclear)
	if worstName != "" {
		t.Logf("most allocated per input byte (inputs over 1 MiB): %.1f, %s", worst, worstName)
	}
	if tried < 200 {
		t.Errorf("only %d malformed inputs tried, want at least 200", tried)
	}
}

// checkCase runs "furrow check" on one case in its folder and returns the
// output, the exit code, the bytes allocated and the panic, if any.
func checkCase(t *testing.T, c malformedCase) (out string, code int, alloc uint64, panicked string) {
	t.Helper()
	t.Chdir(c.dir)
	var stdout, stderr bytes.Buffer
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	func() {
		defer func() {
			if r := recover(); r != nil {
				panicked = fmt.Sprint(r)
			}
		}()
		code = runWithClock(append([]string{"check"}, c.args...), nil, &stdout, &stderr, func() time.Time { return time.Unix(0, 0) })
	}()
	runtime.ReadMemStats(&after)
	return stdout.String() + stderr.String(), code, after.TotalAlloc - before.TotalAlloc, panicked
}

var (
	// findingLine is a finding as check prints it: position, severity,
	// summary, code.
	findingLine = regexp.MustCompile(`^[^\s\[]+(\[[^\]]*\])?(:\d+)?(:\d+)?: (error|warning): (.+) \[([a-z0-9-]+)\]$`)
	internals   = []string{"goroutine ", "%!", "<nil>", "runtime error", "invalid memory address"}
)

// unclearWhy says what is unclear in a check output with a non-zero exit
// code, or "" when nothing is.
func unclearWhy(out string, code int) string {
	for _, s := range internals {
		if strings.Contains(out, s) {
			return "Go internals: " + s
		}
	}
	lines := strings.Split(strings.TrimRight(out, "\n"), "\n")
	for _, l := range lines {
		if len(l) > 2000 {
			return fmt.Sprintf("a line of %d bytes", len(l))
		}
	}
	if code == exitUsage && strings.Contains(out, ": error: ") {
		code = exitFindings // a plan that is not text exits 2 with its findings
	}
	switch code {
	case exitFindings:
		n := 0
		for _, l := range lines {
			if strings.HasPrefix(l, "\t") || !strings.Contains(l, ": error: ") && !strings.Contains(l, ": warning: ") {
				continue
			}
			m := findingLine.FindStringSubmatch(l)
			if m == nil {
				return "a finding that is not positioned: " + l
			}
			n++
		}
		if n == 0 {
			return "exit 1 without a finding"
		}
	case exitUsage:
		if len(lines) != 1 || !strings.HasPrefix(lines[0], "furrow check: ") {
			return "exit 2 without one message line"
		}
		if !regexp.MustCompile(`(reading (data|plan)( |: )|\S+:\d+:\d+: )`).MatchString(lines[0]) {
			return "exit 2 without naming the file"
		}
	default:
		return "exit code " + strconv.Itoa(code)
	}
	return ""
}

// planFixtureCases are the malformed plans of testdata/plans.
func planFixtureCases(t *testing.T, root string) []malformedCase {
	files, err := filepath.Glob(filepath.Join(root, "testdata", "plans", "*.yaml"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no plan fixtures: %v", err)
	}
	var out []malformedCase
	for _, f := range files {
		st, err := os.Stat(f)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, malformedCase{name: "plan fixture " + filepath.Base(f), dir: filepath.Dir(f), args: []string{filepath.Base(f)}, bytes: st.Size()})
	}
	return out
}

// dataFixtureCases are the data fixtures of testdata/data, each checked
// against its plan.
func dataFixtureCases(t *testing.T, root string) []malformedCase {
	plans, err := filepath.Glob(filepath.Join(root, "testdata", "data", "*", "plan.yaml"))
	if err != nil || len(plans) == 0 {
		t.Fatalf("no data fixtures: %v", err)
	}
	var out []malformedCase
	for _, p := range plans {
		dir := filepath.Dir(p)
		var size int64
		entries, _ := os.ReadDir(dir)
		for _, e := range entries {
			if info, err := e.Info(); err == nil {
				size += info.Size()
			}
		}
		out = append(out, malformedCase{name: "data fixture " + filepath.Base(dir), dir: dir, args: []string{"plan.yaml"}, bytes: size})
	}
	return out
}

// fuzzSeedCases are the committed seed corpora of FuzzReadCSV and
// FuzzReadXLSX (as data) and FuzzParse (as plans, over sound data).
func fuzzSeedCases(t *testing.T, root, dir string) []malformedCase {
	var out []malformedCase
	n := 0
	for _, corpus := range []struct{ path, file, format string }{
		{"checker/table/testdata/fuzz/FuzzReadCSV", "plots.csv", "csv"},
		{"checker/table/testdata/fuzz/FuzzReadXLSX", "plots.xlsx", "xlsx"},
		{"plan/testdata/fuzz/FuzzParse", "plan.yaml", ""},
	} {
		files, _ := filepath.Glob(filepath.Join(root, filepath.FromSlash(corpus.path), "*"))
		if len(files) == 0 {
			t.Fatalf("no seeds in %s", corpus.path)
		}
		for _, f := range files {
			data, err := fuzzSeed(f)
			if err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			n++
			d := filepath.Join(dir, fmt.Sprintf("s%03d", n))
			if err := os.MkdirAll(d, 0o755); err != nil {
				t.Fatal(err)
			}
			if corpus.format == "" {
				write(t, filepath.Join(d, "plan.yaml"), data)
				write(t, filepath.Join(d, "plots.csv"), []byte(goodCSV))
			} else {
				write(t, filepath.Join(d, "plan.yaml"), []byte(fmt.Sprintf(dataPlan, corpus.file, corpus.format)))
				write(t, filepath.Join(d, corpus.file), data)
			}
			out = append(out, malformedCase{name: "seed " + corpus.path + "/" + filepath.Base(f), dir: d, args: []string{"plan.yaml"}, bytes: int64(len(data)) + 1024})
		}
	}
	return out
}

// fuzzSeed reads the first value, a []byte, of a seed corpus file
// ("go test fuzz v1" and one value a line).
func fuzzSeed(path string) ([]byte, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	lines := strings.Split(string(b), "\n")
	if len(lines) < 2 || lines[0] != "go test fuzz v1" {
		return nil, fmt.Errorf("not a seed corpus file")
	}
	v := strings.TrimSpace(lines[1])
	if !strings.HasPrefix(v, "[]byte(") || !strings.HasSuffix(v, ")") {
		return nil, fmt.Errorf("the first value is not a []byte")
	}
	s, err := strconv.Unquote(v[len("[]byte(") : len(v)-1])
	return []byte(s), err
}

// mutationCases are deterministic mutations of the sound plan
// (testkit.MutateYAML, the plan fuzzers' mutator) over sound data.
func mutationCases(t *testing.T, dir string) []malformedCase {
	rng := rand.New(rand.NewPCG(2026, 11))
	base := []byte(fmt.Sprintf(dataPlan, "plots.csv", "csv"))
	var out []malformedCase
	for i := 0; len(out) < 40 && i < 400; i++ {
		ops := make([]byte, 3*(1+rng.IntN(4)))
		for k := range ops {
			ops[k] = byte(rng.IntN(256))
		}
		src, ok := testkit.MutateYAML(base, ops)
		if !ok || bytes.Equal(src, base) {
			continue
		}
		d := filepath.Join(dir, fmt.Sprintf("m%03d", len(out)+1))
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
		write(t, filepath.Join(d, "plan.yaml"), src)
		write(t, filepath.Join(d, "plots.csv"), []byte(goodCSV))
		out = append(out, malformedCase{name: fmt.Sprintf("plan mutation %x", ops), dir: d, args: []string{"plan.yaml"}, bytes: int64(len(src)) + 1024})
	}
	return out
}

// kindList writes the case counts by kind.
func kindList(kinds map[string]int) string {
	var parts []string
	for _, k := range sortedKeys(kinds) {
		parts = append(parts, fmt.Sprintf("%s %d", k, kinds[k]))
	}
	return strings.Join(parts, ", ")
}
