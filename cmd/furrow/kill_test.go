package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/rogpeppe/go-internal/txtar"

	"furrow/checker"
)

// killChildEnv, when set in the environment of this test binary, makes it
// run furrow with the JSON-encoded arguments it holds instead of the
// tests (see TestMain): the subprocess TestKilledRunsLeaveNoAcceptablePartialFolder kills.
const killChildEnv = "FURROW_KILL_CHILD_ARGS"

var (
	kills    = flag.Int("kills", 100, "kills per mode in TestKilledRunsLeaveNoAcceptablePartialFolder")
	killSeed = flag.Uint64("kill-seed", 1, "seed of the kill delays")
)

// TestKilledRunsLeaveNoAcceptablePartialFolder starts "furrow run" as a
// subprocess (this test binary) and kills it with SIGKILL after a random
// delay, seeded, spread over the whole run (analysis, reports, tables,
// record). After every kill the run folder is either absent (or holds no
// record), or byte for byte the folder an uninterrupted run writes, and
// verify accepts it; no folder beside it that the run left is accepted
// by verify. The second mode does the same with --replace over the
// folder of an earlier run on other data: the folder is then the old one
// or the new one, whole, never a mixture.
func TestKilledRunsLeaveNoAcceptablePartialFolder(t *testing.T) {
	if testing.Short() {
		t.Skip("kills subprocesses; skipped with -short")
	}
	work := scriptFiles(t, "run_deterministic.txtar")
	// Other data for the earlier run that --replace replaces: one value changed.
	data, err := os.ReadFile(filepath.Join(work, "data.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(string(data), "\n")
	lines[1] = lines[1][:len(lines[1])-1] + "9"
	if err := os.WriteFile(filepath.Join(work, "other.csv"), []byte(strings.Join(lines, "\n")), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Chdir(work)
	const regClock, oldClock, newClock = "1772355600", "1772960400", "1773046800"
	mustRun := func(clock string, args ...string) time.Duration {
		t.Helper()
		start := time.Now()
		if out, err := child(clock, args...).CombinedOutput(); err != nil {
			t.Fatalf("furrow %s: %v\n%s", strings.Join(args, " "), err, out)
		}
		return time.Since(start)
	}
	mustRun(regClock, "register", "plan.yaml")
	// The folders an uninterrupted run writes, and how long a run takes.
	var took time.Duration
	for range 3 {
		os.RemoveAll("ref-new")
		took = max(took, mustRun(newClock, "run", "--out", "ref-new", "plan.yaml"))
	}
	mustRun(oldClock, "run", "--out", "ref-old", "plan.yaml", "other.csv")
	refNew, refOld := readTree(t, "ref-new"), readTree(t, "ref-old")
	if len(refNew) < 5 || equalTrees(refNew, refOld) {
		t.Fatalf("reference folders: %d files, old and new equal: %v", len(refNew), equalTrees(refNew, refOld))
	}
	rng := rand.New(rand.NewPCG(*killSeed, 11))
	tool := checker.ToolInfo{Name: "furrow", Version: toolVersion()}

	for _, mode := range []string{"new folder", "replace"} {
		var absent, noRecord, complete, old, leftovers, acceptablePartial int
		for i := range *kills {
			if mode == "replace" {
				// The folder of the earlier run, each time.
				if _, err := os.Stat("out"); err != nil || !equalTrees(readTree(t, "out"), refOld) {
					os.RemoveAll("out")
					mustRun(oldClock, "run", "--out", "out", "plan.yaml", "other.csv")
				}
			}
			args := []string{"run", "--out", "out", "plan.yaml"}
			if mode == "replace" {
				args = []string{"run", "--replace", "--out", "out", "plan.yaml"}
			}
			cmd := child(newClock, args...)
			delay := time.Duration(rng.Int64N(int64(took) * 3 / 2))
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			time.Sleep(delay)
			cmd.Process.Kill() // SIGKILL; an error means it had already exited
			cmd.Wait()

			// The folder itself.
			switch _, err := os.Stat("out"); {
			case err != nil:
				absent++
			default:
				got := readTree(t, "out")
				if _, ok := got[checker.AuditFileName]; !ok {
					noRecord++
					break
				}
				rep, err := checker.Verify(checker.VerifyOptions{Dir: "out", Tool: tool})
				accepted := err == nil && rep.OK()
				whole := equalTrees(got, refNew) || (mode == "replace" && equalTrees(got, refOld))
				switch {
				case accepted && whole:
					complete++
					if mode == "replace" && equalTrees(got, refOld) {
						old++
					}
				case accepted:
					acceptablePartial++
					t.Errorf("%s, kill %d after %v: verify accepts a folder that is not what a run writes: %s", mode, i, delay, treeDiff(got, refNew))
				default:
					t.Errorf("%s, kill %d after %v: a folder with a record that verify does not accept (err %v, %+v)", mode, i, delay, err, rep)
				}
			}
			// Whatever the run left beside it.
			entries, err := os.ReadDir(".")
			if err != nil {
				t.Fatal(err)
			}
			for _, e := range entries {
				if !strings.HasPrefix(e.Name(), ".out.") {
					continue
				}
				leftovers++
				if rep, err := checker.Verify(checker.VerifyOptions{Dir: e.Name(), Tool: tool}); err == nil && rep.OK() {
					acceptablePartial++
					t.Errorf("%s, kill %d after %v: verify accepts the left-over folder %s", mode, i, delay, e.Name())
				}
				os.RemoveAll(e.Name())
			}
			if mode == "new folder" {
				os.RemoveAll("out")
			}
		}
		t.Logf("%s: %d kills (seed %d, delays up to %v): folder absent %d, without a record %d, complete %d (the old one %d); left-over folders beside it %d; kills leaving an acceptable partial folder: %d of %d",
			mode, *kills, *killSeed, took*3/2, absent, noRecord, complete, old, leftovers, acceptablePartial, *kills)
		// Some kills must have come after the run had written something,
		// or the test proved nothing.
		if complete-old == 0 && leftovers == 0 {
			t.Errorf("%s: no kill came after the run had started writing (absent %d, no record %d, the old folder %d)", mode, absent, noRecord, old)
		}
	}
}

// scriptFiles writes the files of a test script's archive into a new
// folder and returns it.
func scriptFiles(t *testing.T, name string) string {
	t.Helper()
	ar, err := txtar.ParseFile(filepath.Join("testdata", "script", name))
	if err != nil {
		t.Fatal(err)
	}
	work := t.TempDir()
	for _, f := range ar.Files {
		if err := os.WriteFile(filepath.Join(work, f.Name), f.Data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return work
}

// child is furrow with args as a subprocess (this test binary, see
// TestMain), its clock at the Unix time clock.
func child(clock string, args ...string) *exec.Cmd {
	b, _ := json.Marshal(args)
	cmd := exec.Command(os.Args[0])
	cmd.Env = append(os.Environ(), killChildEnv+"="+string(b), "FURROW_TEST_CLOCK="+clock)
	return cmd
}

// readTree returns every regular file under dir by slash path, with its bytes.
func readTree(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	files := map[string][]byte{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		files[filepath.ToSlash(rel)] = b
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return files
}

func equalTrees(a, b map[string][]byte) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if w, ok := b[k]; !ok || !bytes.Equal(v, w) {
			return false
		}
	}
	return true
}

// treeDiff names the files that are missing, extra or different in got.
func treeDiff(got, want map[string][]byte) string {
	var out []string
	for k, v := range want {
		if w, ok := got[k]; !ok {
			out = append(out, "missing "+k)
		} else if !bytes.Equal(v, w) {
			out = append(out, "different "+k)
		}
	}
	for k := range got {
		if _, ok := want[k]; !ok {
			out = append(out, "extra "+k)
		}
	}
	sort.Strings(out)
	return fmt.Sprint(out)
}

// TestConcurrentRunsIntoOneFolder starts two "furrow run --out out" at
// once, again and again: exactly one of them may succeed, the other is
// refused, and the folder is the one an uninterrupted run writes. A
// check for the folder made before the analysis, and the folder made
// after it, let both succeed, the slower writing over the faster.
func TestConcurrentRunsIntoOneFolder(t *testing.T) {
	if testing.Short() {
		t.Skip("starts subprocesses; skipped with -short")
	}
	work := scriptFiles(t, "run_deterministic.txtar")
	t.Chdir(work)
	if out, err := child("1772355600", "register", "plan.yaml").CombinedOutput(); err != nil {
		t.Fatalf("register: %v\n%s", err, out)
	}
	if out, err := child("1772960400", "run", "--out", "ref", "plan.yaml").CombinedOutput(); err != nil {
		t.Fatalf("run: %v\n%s", err, out)
	}
	ref := readTree(t, "ref")
	const rounds = 20
	both := 0
	for i := range rounds {
		a, b := child("1772960400", "run", "--out", "out", "plan.yaml"), child("1772960400", "run", "--out", "out", "plan.yaml")
		var ea, eb bytes.Buffer
		a.Stderr, b.Stderr = &ea, &eb
		if err := a.Start(); err != nil {
			t.Fatal(err)
		}
		if err := b.Start(); err != nil {
			t.Fatal(err)
		}
		errA, errB := a.Wait(), b.Wait()
		switch {
		case errA == nil && errB == nil:
			both++
		case errA != nil && errB != nil:
			t.Errorf("round %d: both runs failed:\n%s%s", i, ea.String(), eb.String())
		default:
			refused := ea.String() + eb.String()
			if !strings.Contains(refused, "out exists; choose a new run directory") && !strings.Contains(refused, "out was created by someone else while this run was writing") {
				t.Errorf("round %d: the refused run says: %s", i, refused)
			}
		}
		if got := readTree(t, "out"); !equalTrees(got, ref) {
			t.Errorf("round %d: the folder is not what one run writes: %s", i, treeDiff(got, ref))
		}
		os.RemoveAll("out")
	}
	if both > 0 {
		t.Errorf("both runs into one folder succeeded in %d of %d rounds", both, rounds)
	}
}
