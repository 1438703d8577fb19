package reliability

import (
	"bufio"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

var update = flag.Bool("update", false, "rewrite testdata/bad/expected.tsv from the readers' current messages")

// badDir is the malformed-input corpus, written by its make_bad.py.
const badDir = "../testdata/bad"

// badAllocCap bounds the bytes one reader may allocate on one corpus file
// (runtime.MemStats.TotalAlloc, which counts every allocation, so it bounds
// the peak too). The largest file is 2 MiB; a reader that sized a buffer
// from a header it had not checked (9999 NAMESTRs, "records": 1e12) would
// blow through it.
const badAllocCap = 64 << 20

// readBad reads one corpus file with the reader its name prefix selects and
// returns the outcome as one line: the error, or for a file that reads,
// "ok" and what was read. Rule sets that load are linted against the study in
// data/ at each rule's level, as `crossform rules lint FILE --data data`
// does; their line is the first issue.
func readBad(name string) string {
	prefix, _, _ := strings.Cut(name, "_")
	var err error
	switch prefix {
	case "csv":
		var t *dataset.Table
		if t, err = dataset.ReadCSVFile(name, dataset.CSVOptions{}); err == nil {
			return fmt.Sprintf("ok: %d rows, %d columns", t.NRows, len(t.Cols))
		}
	case "xpt":
		var ts []*dataset.Table
		if ts, err = dataset.ReadXPTFile(name, dataset.XPTOptions{}); err == nil {
			return fmt.Sprintf("ok: %d tables", len(ts))
		}
	case "dsjson", "ndjson":
		var t *dataset.Table
		if t, err = dataset.ReadDatasetJSONFile(name, dataset.DatasetJSONOptions{}); err == nil {
			return fmt.Sprintf("ok: %d rows, %d columns", t.NRows, len(t.Cols))
		}
	case "define":
		var d *dataset.Define
		if d, err = dataset.ReadDefineFile(name); err == nil {
			var warns []string
			for _, ds := range d.Datasets {
				_, w := d.VarSpecs(ds.Name)
				warns = append(warns, w...)
			}
			if len(warns) > 0 {
				return fmt.Sprintf("ok: %d datasets, %d warnings: %s", len(d.Datasets), len(warns), warns[0])
			}
			return fmt.Sprintf("ok: %d datasets", len(d.Datasets))
		}
	case "vars":
		var v map[string]dataset.VarSpec
		if v, err = dataset.ReadVarsFile(name); err == nil {
			return fmt.Sprintf("ok: %d variables", len(v))
		}
	case "rules":
		var rs *rules.RuleSet
		if rs, err = rules.Load(name); err == nil {
			return lintLine(rs)
		}
	case "listing":
		var fs []check.Finding
		if fs, err = check.ReadListing(name); err == nil {
			return fmt.Sprintf("ok: %d findings", len(fs))
		}
	default:
		return "no reader for prefix " + prefix
	}
	return err.Error()
}

// lintLine lints rs against the study in data/ and returns its first issue.
func lintLine(rs *rules.RuleSet) string {
	study, err := dataset.Open("data", dataset.Options{})
	if err != nil {
		return "data: " + err.Error()
	}
	var tables []*dataset.Table
	seen := map[string]bool{}
	for _, r := range rs.Rules {
		if seen[r.Level] || r.Level == "" {
			continue
		}
		seen[r.Level] = true
		l, err := dataset.ParseLevel(r.Level)
		if err != nil {
			continue // Lint reports the level
		}
		t, _, err := study.Shape(l, dataset.ShapeOptions{})
		if err != nil {
			return fmt.Sprintf("rule %s: level %q: %v", r.ID, r.Level, err)
		}
		t.Level = r.Level
		tables = append(tables, t)
	}
	issues := rules.Lint(rs, tables...)
	if len(issues) == 0 {
		return fmt.Sprintf("ok: %d rules, no lint issue", len(rs.Rules))
	}
	return issues[0].Error()
}

// TestBadCorpus reads every file of testdata/bad and compares its one-line
// outcome with expected.tsv (file, tab, line; rewrite with -update and review
// the diff). Every file is listed, and every listed file exists. No reader may
// panic, print more than one line, or allocate more than badAllocCap bytes.
func TestBadCorpus(t *testing.T) {
	want := map[string]string{}
	f, err := os.Open(filepath.Join(badDir, "expected.tsv"))
	if err == nil {
		sc := bufio.NewScanner(f)
		sc.Buffer(nil, 1<<20)
		for n := 1; sc.Scan(); n++ {
			name, line, ok := strings.Cut(sc.Text(), "\t")
			if !ok {
				t.Fatalf("expected.tsv:%d: want file<TAB>line", n)
			}
			want[name] = line
		}
		f.Close()
	} else if !*update {
		t.Fatal(err)
	}
	t.Chdir(badDir)
	ents, err := os.ReadDir(".")
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range ents {
		if n := e.Name(); !e.IsDir() && n != "expected.tsv" && n != "make_bad.py" && n != "README.md" {
			names = append(names, n)
		}
	}
	if len(names) < 40 {
		t.Fatalf("%d corpus files, want at least 40", len(names))
	}
	got := map[string]string{}
	var peak uint64
	for _, name := range names {
		var m0, m1 runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&m0)
		line := func() (line string) {
			defer func() {
				if p := recover(); p != nil {
					line = fmt.Sprintf("PANIC: %v", p)
				}
			}()
			return readBad(name)
		}()
		runtime.ReadMemStats(&m1)
		got[name] = line
		alloc := m1.TotalAlloc - m0.TotalAlloc
		peak = max(peak, alloc)
		if alloc > badAllocCap {
			t.Errorf("%s: reading allocated %d MiB, cap %d MiB", name, alloc>>20, badAllocCap>>20)
		}
		if strings.HasPrefix(line, "PANIC") || strings.Contains(line, "\n") {
			t.Errorf("%s: %q: want a one-line error, no panic", name, line)
		}
		if w, ok := want[name]; !ok && !*update {
			t.Errorf("%s: not in expected.tsv (got %q)", name, line)
		} else if ok && w != line && !*update {
			t.Errorf("%s:\n got  %s\n want %s", name, line, w)
		}
	}
	for name := range want {
		if _, ok := got[name]; !ok {
			t.Errorf("expected.tsv lists %s, which is not in testdata/bad", name)
		}
	}
	if *update {
		var b strings.Builder
		slices.Sort(names)
		for _, n := range names {
			fmt.Fprintf(&b, "%s\t%s\n", n, strings.ReplaceAll(got[n], "\n", `\n`))
		}
		if err := os.WriteFile("expected.tsv", []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	t.Logf("%d files, largest allocation %.1f MiB (cap %d MiB)", len(names), float64(peak)/(1<<20), badAllocCap>>20)
}
