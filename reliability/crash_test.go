package reliability

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// Kill iterations of the crash tests: enough kills to land in every phase of
// a save (before the temporary file, while writing it, between sync and
// rename, after the rename) many times, within a few seconds each.
// On a loaded machine (process start-up dominates an iteration) a test stops
// after crashBudget once it has done minKills, and says so in its log.
const (
	crashRuleSetKills = 200
	crashOutputKills  = 100
	maxKillDelay      = 30 * time.Millisecond
	crashBudget       = 20 * time.Second
	minKills          = 50
)

// killsDone reports whether a crash test that started at start and has done
// kills kills should stop: all of them done, or out of time after minKills.
func killsDone(t *testing.T, kills, want int, start time.Time) bool {
	if testing.Short() {
		want = minKills
	}
	if kills >= want {
		return true
	}
	if kills >= minKills && time.Since(start) > crashBudget {
		t.Logf("stopping after %d of %d kills: %v budget used (loaded machine)", kills, want, crashBudget)
		return true
	}
	return false
}

// crashRuleSet is the rule set the rule-set crash test starts from: one rule
// the child decides on over and over, and a hand-written neighbour with a
// comment that every rewrite must keep.
const crashRuleSet = `# crash-test rule set
schema: 1
rules:
  - id: r1
    kind: expr
    level: table
    severity: minor
    params: {require: 'A > 0'}
  # keep this comment
  - id: r2
    kind: order
    level: table
    severity: major
    variables: [A, B]
`

// childRuleSet loops load → decide → save on path, alternately accepting and
// retiring rule r1 with the note "seq=N", N one more than the last decision
// in the file, and prints "saved N" once Save has returned.
func childRuleSet(path string) error {
	fmt.Println("ready")
	for {
		rs, err := rules.Load(path)
		if err != nil {
			return err
		}
		r := rs.Rule("r1")
		seqs, err := seqsOf(r.History)
		if err != nil {
			return err
		}
		next := len(seqs) + 1
		action := rules.ActionAccept
		if r.Status == rules.StatusAccepted {
			action = rules.ActionRetire
		}
		if err := rules.Decide(rs, []string{"r1"}, action, "crash-child", "seq="+strconv.Itoa(next), time.Now()); err != nil {
			return err
		}
		if err := rs.Save(); err != nil {
			return err
		}
		fmt.Printf("saved %d\n", next)
	}
}

// seqsOf returns the N of each "seq=N" note in h, in order.
func seqsOf(h []rules.Event) ([]int, error) {
	var out []int
	for _, e := range h {
		n, err := strconv.Atoi(strings.TrimPrefix(e.Note, "seq="))
		if err != nil {
			return nil, fmt.Errorf("history entry %+v: note is not seq=N", e)
		}
		out = append(out, n)
	}
	return out, nil
}

// childOutputs loops writing a listing of N findings (render.WriteListingFile)
// and then a manifest with parameter seq=N (Manifest.WriteFile) into dir,
// N counting on from the listing found there, printing "listing N" and
// "manifest N" once each write has returned.
func childOutputs(dir string) error {
	listing, manifest := filepath.Join(dir, "listing.csv"), filepath.Join(dir, "manifest.json")
	fs, err := check.ReadListing(listing)
	if errors.Is(err, os.ErrNotExist) {
		err = nil
	}
	if err != nil {
		return err
	}
	fmt.Println("ready")
	for n := len(fs) + 1; ; n++ {
		fs = append(fs, crashFinding(n))
		if err := render.WriteListingFile(listing, "csv", &render.Listing{Findings: fs}, render.XLSXOptions{}); err != nil {
			return err
		}
		fmt.Printf("listing %d\n", n)
		m := &check.Manifest{Schema: check.ManifestSchema, ToolVersion: "crash-test",
			Created: time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC), Study: "none",
			Parameters: map[string]string{"seq": strconv.Itoa(n)}}
		if err := m.WriteFile(manifest); err != nil {
			return err
		}
		fmt.Printf("manifest %d\n", n)
	}
}

// crashFinding returns the n-th finding of the outputs child.
func crashFinding(n int) check.Finding {
	subj := fmt.Sprintf("S-%05d", n)
	rk := "USUBJID=" + subj + ";VISITNUM=1"
	return check.Finding{Key: "r2|" + rk, RuleID: "r2", Kind: "order", Severity: rules.Major,
		RuleStatus: rules.StatusAccepted, Level: "visit", Site: "01", Subject: subj, Visit: "1",
		Domain: "VS", RecordKey: rk, Vars: []string{"A", "B"}, Values: []string{strconv.Itoa(n), "0"},
		Query: "A is " + strconv.Itoa(n) + ", B is 0: please check", Row: -1}
}

// runAndKill starts the child mode on path, waits for its "ready" line,
// sleeps a random delay from rng, SIGKILLs it and returns the numbers of
// its "<word> N" stdout lines by word.
func runAndKill(t *testing.T, mode, path string, rng *rand.Rand) map[string][]int {
	t.Helper()
	if runtime.GOOS == "windows" || runtime.GOOS == "plan9" {
		t.Skip("needs SIGKILL; Windows ends a killed process with an ordinary exit code")
	}
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), childEnv+"="+mode, "RELIABILITY_PATH="+path)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	sc := bufio.NewScanner(stdout)
	if !sc.Scan() || sc.Text() != "ready" {
		cmd.Process.Kill()
		cmd.Wait()
		t.Fatalf("child %s did not start: %q\n%s", mode, sc.Text(), stderr.String())
	}
	done := make(chan map[string][]int)
	go func() {
		got := map[string][]int{}
		for sc.Scan() {
			w, n, ok := strings.Cut(sc.Text(), " ")
			if k, err := strconv.Atoi(n); ok && err == nil {
				got[w] = append(got[w], k)
			}
		}
		done <- got
	}()
	time.Sleep(time.Duration(rng.Int64N(int64(maxKillDelay))))
	if err := cmd.Process.Kill(); err != nil {
		t.Fatal(err)
	}
	got := <-done
	err = cmd.Wait()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != -1 {
		// -1: killed by a signal. Anything else is the child's own failure.
		t.Fatalf("child %s ended by itself (%v), not by the kill:\n%s", mode, err, stderr.String())
	}
	return got
}

func maxOf(last int, xs []int) int {
	for _, x := range xs {
		last = max(last, x)
	}
	return last
}

// TestCrashRuleSetSave: a process saving decisions is SIGKILLed at random
// moments. After every kill the rule set must load (so it is the old or the
// new complete file, never a torn one), its decisions must be 1..M in order
// (nothing reordered or duplicated), M must include every decision a
// completed Save reported, and at most the one being saved at the kill
// beyond them. The hand-written rule and its comment survive every rewrite.
func TestCrashRuleSetSave(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "rules.yaml")
	if err := os.WriteFile(path, []byte(crashRuleSet), 0o644); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(20261202, 1))
	last, beyond, kills := 0, 0, 0
	for start := time.Now(); !killsDone(t, kills, crashRuleSetKills, start); kills++ {
		i := kills
		got := runAndKill(t, "ruleset", path, rng)
		rs, err := rules.Load(path)
		if err != nil {
			t.Fatalf("kill %d: the rule set does not load after the kill: %v", i+1, err)
		}
		seqs, err := seqsOf(rs.Rule("r1").History)
		if err != nil {
			t.Fatalf("kill %d: %v", i+1, err)
		}
		for k, s := range seqs {
			if s != k+1 {
				t.Fatalf("kill %d: decision %d in the file is seq=%d, want seq=%d", i+1, k+1, s, k+1)
			}
		}
		want := maxOf(last, got["saved"])
		switch m := len(seqs); {
		case m < want:
			t.Fatalf("kill %d: the file holds decisions 1..%d, but a completed Save reported %d", i+1, m, want)
		case m > want+1:
			t.Fatalf("kill %d: the file holds decisions 1..%d, more than the %d reported plus the one in progress", i+1, m, want)
		case m == want+1:
			beyond++ // killed after the rename, before "saved" was printed
		}
		last = len(seqs)
		b, _ := os.ReadFile(path)
		if !bytes.Contains(b, []byte("# keep this comment")) || rs.Rule("r2") == nil {
			t.Fatalf("kill %d: the hand-written rule or its comment was lost:\n%s", i+1, b)
		}
	}
	tmp := checkLeftovers(t, dir, "rules.yaml", ".rules.yaml.lock")
	t.Logf("%d kills, %d decisions saved, %d kills between rename and report, %d temporary files left", kills, last, beyond, tmp)
	if last < 20 {
		t.Errorf("only %d decisions saved in %d runs: the kills came too early to test anything", last, crashRuleSetKills)
	}
}

// TestCrashOutputs: the same for the checker's listing and manifest. After
// every kill the listing must read back (check.ReadListing) with N findings,
// N the last reported write or the one after it, and the manifest must decode
// with seq=M, M at least the last reported write and never ahead of the
// listing (it may lag or skip: a child killed between the two writes leaves
// the old manifest, and the next child numbers on from the listing).
func TestCrashOutputs(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(20261202, 2))
	lastL, lastM, kills := 0, 0, 0
	for start := time.Now(); !killsDone(t, kills, crashOutputKills, start); kills++ {
		i := kills
		got := runAndKill(t, "outputs", dir, rng)
		fs, err := check.ReadListing(filepath.Join(dir, "listing.csv"))
		if errors.Is(err, os.ErrNotExist) && lastL == 0 && len(got["listing"]) == 0 {
			continue // killed before the first write
		}
		if err != nil {
			t.Fatalf("kill %d: the listing does not read after the kill: %v", i+1, err)
		}
		for k, f := range fs {
			if f.Key != crashFinding(k+1).Key {
				t.Fatalf("kill %d: finding %d has key %q, want %q", i+1, k+1, f.Key, crashFinding(k+1).Key)
			}
		}
		n := len(fs)
		if want := maxOf(lastL, got["listing"]); n < want || n > want+1 {
			t.Fatalf("kill %d: listing holds %d findings, want %d or %d", i+1, n, want, want+1)
		}
		m := 0
		b, err := os.ReadFile(filepath.Join(dir, "manifest.json"))
		if err == nil {
			var man check.Manifest
			if err := json.Unmarshal(b, &man); err != nil {
				t.Fatalf("kill %d: the manifest does not decode after the kill: %v", i+1, err)
			}
			if m, err = strconv.Atoi(man.Parameters["seq"]); err != nil {
				t.Fatalf("kill %d: manifest seq %q", i+1, man.Parameters["seq"])
			}
		} else if !errors.Is(err, os.ErrNotExist) || lastM > 0 {
			t.Fatalf("kill %d: %v", i+1, err)
		}
		if want := maxOf(lastM, got["manifest"]); m < want {
			t.Fatalf("kill %d: manifest has seq %d, but a completed write reported %d", i+1, m, want)
		}
		if m > n {
			t.Fatalf("kill %d: manifest seq %d is ahead of the listing's %d", i+1, m, n)
		}
		lastL, lastM = n, m
	}
	tmp := checkLeftovers(t, dir, "listing.csv", "manifest.json")
	t.Logf("%d kills, %d listing and %d manifest writes survived, %d temporary files left", kills, lastL, lastM, tmp)
	if lastL < 20 {
		t.Errorf("only %d listings written in %d runs: the kills came too early to test anything", lastL, crashOutputKills)
	}
}

// checkLeftovers fails on any file in dir other than the named ones and
// hidden temporary files ".NAME.tmp*" of a named file, and returns how many
// of those there are. Temporary files are hidden (dot) files, which
// dataset.Open skips, and never have the rule set's or listing's name.
func checkLeftovers(t *testing.T, dir string, names ...string) int {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	tmp := 0
	for _, e := range ents {
		ok := false
		for _, n := range names {
			if e.Name() == n {
				ok = true
			} else if strings.HasPrefix(e.Name(), "."+n+".tmp") {
				ok = true
				tmp++
			}
		}
		if !ok {
			t.Errorf("unexpected file %s left in %s", e.Name(), dir)
		}
	}
	return tmp
}
