package reliability

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/dataset/demostudy"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
	"github.com/crossform/crossform/rules/check"
)

// detLevels are the levels the determinism pipeline proposes at, as
// `crossform propose` does for an SDTM study with an AE table.
var detLevels = []string{"subject", "visit", "record:AE"}

// detPipeline runs propose → accept → check on the study at studyDir with
// GOMAXPROCS procs and workers goroutines in the association engine and the
// checker, writing into outDir, and returns every output by name. Clocks are
// fixed, so nothing in the outputs may depend on the run.
func detPipeline(t *testing.T, studyDir, outDir string, procs, workers int) map[string][]byte {
	t.Helper()
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(procs))
	ctx := context.Background()
	now := time.Date(2026, 1, 15, 12, 0, 0, 0, time.UTC)
	study, err := dataset.Open(studyDir, dataset.Options{})
	if err != nil {
		t.Fatal(err)
	}
	rsPath := filepath.Join(outDir, "rules.yaml")
	os.Remove(rsPath)
	rs := rules.New(rsPath)
	for _, lv := range detLevels {
		l, err := dataset.ParseLevel(lv)
		if err != nil {
			t.Fatal(err)
		}
		tb, _, err := study.Shape(l, dataset.ShapeOptions{})
		if err != nil {
			t.Fatalf("shaping %s: %v", lv, err)
		}
		m, err := assoc.AllPairs(ctx, tb, assoc.Options{Workers: workers})
		if err != nil {
			t.Fatalf("associations at %s: %v", lv, err)
		}
		var hints []rules.Hint
		for _, p := range m.Pairs {
			if p.Skip == assoc.NotSkipped {
				hints = append(hints, rules.Hint{A: m.Names[p.I], B: m.Names[p.J], Measure: p.Measure.String(), Strength: p.Strength, Q: p.Q})
			}
		}
		fp := rules.Fingerprint(tb)
		props, err := rules.Propose(tb, lv, hints, rules.ProposeOptions{Fingerprint: fp, Now: now})
		if err != nil {
			t.Fatalf("proposing at %s: %v", lv, err)
		}
		rules.Merge(rs, props, fp)
	}
	if err := rs.Save(); err != nil {
		t.Fatal(err)
	}
	ids := rules.Select(rs, rules.Filter{Status: rules.StatusProposed})
	if len(ids) == 0 {
		t.Fatal("nothing proposed on the demo study")
	}
	if err := rules.Decide(rs, ids, rules.ActionAccept, "determinism-test", "accept all", now.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := rs.Save(); err != nil {
		t.Fatal(err)
	}
	res, err := check.Run(ctx, rs, study, check.Options{Workers: workers, ToolVersion: "determinism-test",
		Now: func() time.Time { return now.Add(2 * time.Hour) }})
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]byte{}
	out["rules.yaml"], err = os.ReadFile(rsPath)
	if err != nil {
		t.Fatal(err)
	}
	l := render.NewListing(res)
	for _, f := range []string{"csv", "json"} {
		p := filepath.Join(outDir, "listing."+f)
		if err := render.WriteListingFile(p, f, l, render.XLSXOptions{}); err != nil {
			t.Fatal(err)
		}
		if out["listing."+f], err = os.ReadFile(p); err != nil {
			t.Fatal(err)
		}
	}
	var mb bytes.Buffer
	if err := res.Manifest.WriteJSON(&mb); err != nil {
		t.Fatal(err)
	}
	out["manifest.json"] = mb.Bytes()
	out["findings"] = fmt.Appendf(nil, "%d", len(res.Findings))
	return out
}

// TestDeterminism: the same extract and clock give byte-identical rule set,
// listings (CSV, JSON) and manifest whether the association engine and the
// checker run on one core with one worker or on two cores with two or eight
// workers. The study folder also holds a broken leftover temporary file,
// which must be ignored.
func TestDeterminism(t *testing.T) {
	st, err := demostudy.Generate(demostudy.DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	studyDir := filepath.Join(t.TempDir(), "extract")
	if err := st.WriteCSV(studyDir); err != nil {
		t.Fatal(err)
	}
	// A temporary file a killed writer left in the study folder must never be
	// read as a table (dataset.Open skips hidden files): this one would fail.
	if err := os.WriteFile(filepath.Join(studyDir, ".dm.csv.tmp4242"), []byte("USUBJID,\"AGE\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	outDir := t.TempDir()
	base := detPipeline(t, studyDir, outDir, 1, 1)
	if string(base["findings"]) == "0" {
		t.Fatal("the check found nothing on the demo study: the comparison would be vacuous")
	}
	for _, run := range []struct{ procs, workers int }{{2, 2}, {2, 8}} {
		got := detPipeline(t, studyDir, outDir, run.procs, run.workers)
		for name, want := range base {
			if !bytes.Equal(got[name], want) {
				t.Errorf("GOMAXPROCS=%d workers=%d: %s differs from GOMAXPROCS=1 workers=1 (%d vs %d bytes)",
					run.procs, run.workers, name, len(got[name]), len(want))
			}
		}
	}
	t.Logf("%s findings, rule set %d bytes, listing %d bytes: identical over 3 runs", base["findings"], len(base["rules.yaml"]), len(base["listing.csv"]))
}
