package checker

import (
	"bytes"
	"crypto/ed25519"
	"encoding/json"
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"furrow/checker/internal/fixture"

	"furrow/checker/record"
)

// editsPlan is a small registered trial with an exclusion, a fallback
// and two hypotheses, so that its record has every kind of member.
const editsPlan = `furrow: 1
trial:
  id: T-EDITS
  title: every single-field edit (invented)
  version: "%s"
  amendments: %s
data:
  file: data.csv
  format: csv
columns:
  - name: block
    role: block
    levels: [B1, B2, B3]
  - name: unit
    role: unit
  - name: treatment
    role: treatment
    levels: [control, a, b]
    control: control
  - name: y
    role: response
    min: 1
    max: 1000
design:
  layout: rcbd
  replicates: 4
  least-units: {per: cell, count: 3, below: stop}
exclusions:
  - id: listed
    drop: unit
    when: listed
    units: [u12]
    reason: invented exclusion for the test
endpoints:
  - id: yield
    response: y
    primary: true
    not-computable: fail
    steps:
      - id: anova
        model: linear
        fixed: [block, treatment]
        checks:
          - test: shapiro-wilk
            fail-below: 0.99999
        on-fail: logged
      - id: logged
        model: linear
        transform: {kind: log}
        fixed: [block, treatment]
        checks:
          - test: levene
            fail-below: 1e-12
    hypotheses:
      - id: vs-control
        kind: versus-control
        adjust: %s
      - id: trt
        kind: term
        term: treatment
`

const editsAmendment = `
    - version: "1.1"
      date: "2026-03-02"
      reason: step-up procedure preferred
      changes: adjust holm -> hochberg`

// editsTool is the tool that writes and checks the records of the test.
var editsTool = ToolInfo{Name: "furrow", Version: "test", Build: "go-test"}

// editRunFolder writes the trial (registered, then amended and registered
// again) and a run folder of it at dir/name, signed with key when it is
// not nil, and returns the record's bytes.
func editRunFolder(t *testing.T, dir, name string, key ed25519.PrivateKey) []byte {
	t.Helper()
	pp := filepath.Join(dir, "plan.yaml")
	if _, err := os.Stat(pp); err != nil {
		rng := rand.New(rand.NewPCG(3, 5))
		var b strings.Builder
		b.WriteString("block,unit,treatment,y\n")
		for i := range 12 {
			tr := []string{"control", "a", "b"}[i%3]
			mu := map[string]float64{"control": 20, "a": 26, "b": 31}[tr]
			fmt.Fprintf(&b, "B%d,u%d,%s,%.3f\n", i/4+1, i+1, tr, mu*(1+0.1*rng.NormFloat64()))
		}
		writeFile(t, filepath.Join(dir, "data.csv"), b.String())
		t0 := time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
		writeFile(t, pp, fmt.Sprintf(editsPlan, "1.0", "[]", "holm"))
		if _, ds, err := Register(pp, RegisterOptions{Now: t0, ToolVersion: "test", GitCommit: func(string) string { return "" }}); err != nil {
			t.Fatal(err, ds)
		}
		writeFile(t, pp, fmt.Sprintf(editsPlan, "1.1", editsAmendment, "hochberg"))
		if _, ds, err := Register(pp, RegisterOptions{Now: t0.Add(24 * time.Hour), ToolVersion: "test", GitCommit: func(string) string { return "" }}); err != nil {
			t.Fatal(err, ds)
		}
	}
	out := filepath.Join(dir, name)
	res, err := Run(RunOptions{PlanPath: pp, OutDir: out, Now: time.Date(2026, 3, 3, 9, 0, 0, 0, time.UTC), Tool: editsTool})
	if err != nil {
		t.Fatal(err)
	}
	if err := WriteRun(out, res, key, false); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(filepath.Join(out, AuditFileName))
	if err != nil {
		t.Fatal(err)
	}
	return raw
}

func writeFile(t *testing.T, path, s string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
}

// editOutcome is what verify made of one edited record.
type editOutcome int

const (
	editCaught   editOutcome = iota // verify fails (a deviation, or it refuses the folder)
	editReported                    // verify passes, with an informational deviation naming it
	editMissed                      // verify passes and says nothing
)

// TestEverySingleFieldEditIsCaught changes every leaf of a run's record,
// one at a time (numbers beyond the tolerance, strings by a character
// that keeps them valid for the schema where one does, booleans flipped,
// nulls filled), and runs verify on each edited record: as edited, and
// with the content hash recomputed (what anyone can do), for an unsigned
// and a signed record.
//
// Every edit is caught, except two kinds on an unsigned record. Its
// run_at is outside the content hash and covered only by a signature, so
// an edit of it is missed whether or not the hash is recomputed (the
// timestamp is kept apart so that the same plan on the same data gives
// the same hash; a late amendment is still caught through the record's
// copy of the registration chain). With the content hash recomputed, only
// what verify can derive again (from the plan, the data, the registration
// and the run folder's files) is caught; what is not, listed in
// notRederivable, is what an unsigned record cannot prove (see README,
// "Security notes"): when the run was made, and by which build (reported
// as informational), and the plan file's exact bytes when its content is
// unchanged (reported as informational).
func TestEverySingleFieldEditIsCaught(t *testing.T) {
	if testing.Short() {
		t.Skip("runs verify once per field; skipped with -short")
	}
	dir := t.TempDir()
	_, priv, err := record.GenerateKey(rand.NewChaCha8([32]byte{7}))
	if err != nil {
		t.Fatal(err)
	}
	key, _ := record.ParsePrivateKey(priv)
	// inputs.plan_file_sha256 is caught: on an unsigned record a recorded
	// plan file hash that disagrees with the plan file is plan-file-differs,
	// a deviation (issue 11).
	notRederivable := map[string]editOutcome{
		"run_at":       editMissed,
		"tool.name":    editReported,
		"tool.version": editReported,
		"tool.build":   editReported,
	}
	for _, signed := range []bool{false, true} {
		name, k := "unsigned", ed25519.PrivateKey(nil)
		if signed {
			name, k = "signed", key
		}
		raw := editRunFolder(t, dir, name, k)
		// The clean record verifies; unsigned, it carries the informational
		// note that its amendment's date cannot be checked against its run
		// time, and an edit counts as reported only beyond that note.
		rep, err := Verify(VerifyOptions{Dir: filepath.Join(dir, name), Tool: editsTool})
		if err != nil || !rep.OK() || (signed && len(rep.Deviations) != 0) {
			t.Fatalf("%s: the clean record: %v %+v", name, err, rep)
		}
		base := len(rep.Deviations)
		for _, d := range rep.Deviations {
			if d.Code != DevAmendmentUnchecked {
				t.Fatalf("%s: the clean record: %+v", name, d)
			}
		}
		for _, rehash := range []bool{false, true} {
			outcomes, invalid := editEveryLeaf(t, dir, name, raw, rehash, base)
			var caught, reported, missed []string
			for _, p := range sortedKeys(outcomes) {
				switch outcomes[p] {
				case editCaught:
					caught = append(caught, p)
				case editReported:
					reported = append(reported, p)
				default:
					missed = append(missed, p)
				}
			}
			how := "as edited"
			if rehash {
				how = "with the content hash recomputed"
			}
			t.Logf("%s record, %s: %d single-field edits (%d valid for the schema), %d caught, %d reported as informational %v, %d missed %v",
				name, how, len(outcomes), len(outcomes)-invalid, len(caught), len(reported), reported, len(missed), missed)
			for _, p := range sortedKeys(outcomes) {
				want := editCaught
				if p == "run_at" && !signed {
					want = editMissed
				}
				if rehash && !signed {
					if w, ok := notRederivable[p]; ok {
						want = w
					}
				}
				if got := outcomes[p]; got != want {
					t.Errorf("%s record, %s: the edit of %s: got %s, want %s", name, how, p, outcomeText(got), outcomeText(want))
				}
			}
		}
	}
}

func outcomeText(o editOutcome) string {
	return [...]string{"caught", "reported only as informational", "missed"}[o]
}

func sortedKeys[V any](m map[string]V) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

// editEveryLeaf edits every leaf of the record raw of the run folder
// dir/name, one at a time, in copies of the folder, and returns verify's
// outcome by field path and the number of edits that the schema alone
// refuses (no change of that leaf keeps the record valid). The content hash itself
// is not edited when rehash is true (recomputing it undoes the edit). An
// edit counts as reported when verify lists more than the base deviations
// of the clean record (all informational).
func editEveryLeaf(t *testing.T, dir, name string, raw []byte, rehash bool, base int) (map[string]editOutcome, int) {
	t.Helper()
	var paths []string
	fixture.WalkLeaves("", decodeUseNumber(t, raw), func(p string, _ any, _ func(any)) {
		if !(rehash && p == "integrity.content_hash") {
			paths = append(paths, p)
		}
	})
	workers := max(1, runtime.GOMAXPROCS(0))
	copies := make([]string, workers)
	for w := range copies {
		copies[w] = filepath.Join(dir, fmt.Sprintf("%s-%v-%d", name, rehash, w))
		copyTree(t, filepath.Join(dir, name), copies[w])
	}
	outcomes := make(map[string]editOutcome, len(paths))
	invalid := 0
	var mu sync.Mutex
	var wg sync.WaitGroup
	next := make(chan string)
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for p := range next {
				edited, valid := editLeaf(t, raw, p, rehash)
				if err := os.WriteFile(filepath.Join(copies[w], AuditFileName), edited, 0o644); err != nil {
					t.Error(err)
					continue
				}
				rep, err := Verify(VerifyOptions{Dir: copies[w], Tool: editsTool})
				o := editMissed
				switch {
				case err != nil || !rep.OK():
					o = editCaught
				case len(rep.Deviations) > base:
					o = editReported
				}
				mu.Lock()
				outcomes[p] = o
				if !valid {
					invalid++
				}
				mu.Unlock()
			}
		}()
	}
	for _, p := range paths {
		next <- p
	}
	close(next)
	wg.Wait()
	return outcomes, invalid
}

// editLeaf returns raw with the leaf at path changed (and the content
// hash recomputed when rehash is true): the first change of the leaf that
// keeps the record valid for its schema, else the first change.
func editLeaf(t *testing.T, raw []byte, path string, rehash bool) ([]byte, bool) {
	var first []byte
	for i := 0; ; i++ {
		doc := decodeUseNumber(t, raw)
		done := false
		fixture.WalkLeaves("", doc, func(p string, v any, set func(any)) {
			if p != path || done {
				return
			}
			cands := leafChanges(v)
			if i < len(cands) {
				set(cands[i])
				done = true
			}
		})
		if !done {
			if first == nil {
				t.Fatalf("no change for %s", path)
			}
			return first, false
		}
		b := encodeRecord(t, doc)
		if rehash {
			h, err := record.ContentHash(b)
			if err != nil {
				t.Fatal(err)
			}
			doc["integrity"].(map[string]any)["content_hash"] = h
			b = encodeRecord(t, doc)
		}
		if record.ValidateRecord(b) == nil {
			return b, true
		}
		if first == nil {
			first = b
		}
	}
}

// leafChanges are the candidate changes of a leaf, best first; none of
// them is the leaf's value.
func leafChanges(v any) []any {
	var out []any
	for _, c := range leafCandidates(v) {
		if c != v {
			out = append(out, c)
		}
	}
	return out
}

func leafCandidates(v any) []any {
	switch x := v.(type) {
	case json.Number:
		s := string(x)
		if !strings.ContainsAny(s, ".eE") {
			n, _ := strconv.ParseInt(s, 10, 64)
			return []any{json.Number(strconv.FormatInt(n+1, 10))}
		}
		f, _ := strconv.ParseFloat(s, 64)
		if f == 0 {
			return []any{json.Number("1e-6")}
		}
		return []any{json.Number(strconv.FormatFloat(f*(1+1e-6), 'g', -1, 64))}
	case string:
		return []any{bumpLastDigit(x), x + "x", ""}
	case bool:
		return []any{!x}
	case nil:
		return []any{json.Number("0"), "x", false}
	}
	panic(fmt.Sprintf("leaf of type %T", v))
}

// bumpLastDigit changes the last decimal or hex digit of s (another
// valid hash, time or position), or appends one when s has none.
func bumpLastDigit(s string) string {
	b := []byte(s)
	for i := len(b) - 1; i >= 0; i-- {
		switch c := b[i]; {
		case c >= '0' && c <= '8', c >= 'a' && c <= 'e':
			b[i]++
			return string(b)
		case c == '9':
			b[i] = '0'
			return string(b)
		case c == 'f':
			b[i] = '0'
			return string(b)
		}
	}
	return s + "1"
}

func decodeUseNumber(t *testing.T, raw []byte) map[string]any {
	t.Helper()
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	var doc map[string]any
	if err := dec.Decode(&doc); err != nil {
		t.Fatal(err)
	}
	return doc
}

func encodeRecord(t *testing.T, doc map[string]any) []byte {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(doc); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// copyTree copies the folder src to dst.
func copyTree(t *testing.T, src, dst string) {
	t.Helper()
	err := filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(src, p)
		to := filepath.Join(dst, rel)
		if d.IsDir() {
			return os.MkdirAll(to, 0o755)
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return os.WriteFile(to, b, 0o644)
	})
	if err != nil {
		t.Fatal(err)
	}
}
