package main

import (
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/crossform/crossform/dataset/demostudy"
)

var (
	demoOnce sync.Once
	demoDir  string
	demoErr  error
)

// demoExtract writes the demo study once per test binary and returns its folder.
func demoExtract(t *testing.T) string {
	t.Helper()
	demoOnce.Do(func() {
		demoDir, demoErr = os.MkdirTemp("", "crossform-demo-*")
		if demoErr != nil {
			return
		}
		var st *demostudy.Study
		if st, demoErr = demostudy.Generate(demostudy.DefaultConfig()); demoErr == nil {
			demoErr = st.WriteCSV(demoDir)
		}
	})
	if demoErr != nil {
		t.Fatal(demoErr)
	}
	return demoDir
}

func TestMain(m *testing.M) {
	code := m.Run()
	if demoDir != "" {
		os.RemoveAll(demoDir)
	}
	os.Exit(code)
}

func readCSV(t *testing.T, path string) []map[string]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out []map[string]string
	for _, r := range recs[1:] {
		m := map[string]string{}
		for i, h := range recs[0] {
			m[h] = r[i]
		}
		out = append(out, m)
	}
	return out
}

func TestAssociateDemoVisitLevel(t *testing.T) {
	dir := demoExtract(t)
	out := filepath.Join(t.TempDir(), "pairs.csv")
	_, errs, code := runCLI(t, "associate", dir, "--level", "visit", "--min-strength", "0.5", "--out", out)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	rows := readCSV(t, out)
	found := map[string]bool{}
	for _, r := range rows {
		found[r["var_a"]+"|"+r["var_b"]] = true
		found[r["var_b"]+"|"+r["var_a"]] = true
	}
	// The generator builds these dependencies in (see dataset/demostudy).
	for _, p := range []string{"VS.SYSBP|VS.DIABP", "LB.ALT|LB.AST", "VS.WEIGHT|VS.BMI", "DM.SEX|LB.CREAT"} {
		if !found[p] {
			t.Errorf("pair %s not among pairs with strength ≥ 0.5", p)
		}
	}
	if !strings.Contains(errs, "strongest spearman pairs") {
		t.Errorf("stderr lacks the summary: %q", errs)
	}
}

func TestClusterDemo(t *testing.T) {
	dir := demoExtract(t)
	out := t.TempDir()
	stdout, errs, code := runCLI(t, "cluster", dir, "--level", "visit", "--out", out)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, f := range []string{"clusters.csv", "dependencies.csv", "clusters.dot", "clusters.svg", "heatmap.svg", "dendrogram.svg"} {
		if fi, err := os.Stat(filepath.Join(out, f)); err != nil || fi.Size() == 0 {
			t.Errorf("%s not written: %v", f, err)
		}
	}
	of := map[string]string{}
	for _, r := range readCSV(t, filepath.Join(out, "clusters.csv")) {
		of[r["variable"]] = r["cluster"]
	}
	for _, group := range [][]string{{"VS.SYSBP", "VS.DIABP"}, {"LB.ALT", "LB.AST"}, {"VS.WEIGHT", "VS.BMI"}} {
		if of[group[0]] == "0" || of[group[0]] != of[group[1]] {
			t.Errorf("%v in clusters %q and %q, want one cluster", group, of[group[0]], of[group[1]])
		}
	}
	if !strings.Contains(stdout, "clusters") {
		t.Errorf("summary missing: %q", stdout)
	}
	// Under average linkage height joins sex (and the sex-dependent labs), the
	// demo's strongest partner of height, rather than BMI, which is weight
	// normalised by height and so nearly independent of it. Single linkage
	// chains height–weight–BMI into one cluster.
	out2 := t.TempDir()
	if _, errs, code := runCLI(t, "cluster", dir, "--level", "visit", "--linkage", "single", "--out", out2); code != exitOK {
		t.Fatalf("single linkage: exit %d: %s", code, errs)
	}
	of2 := map[string]string{}
	for _, r := range readCSV(t, filepath.Join(out2, "clusters.csv")) {
		of2[r["variable"]] = r["cluster"]
	}
	if c := of2["VS.HEIGHT"]; c == "0" || c != of2["VS.WEIGHT"] || c != of2["VS.BMI"] {
		t.Errorf("single linkage: height, weight, BMI in clusters %q, %q, %q; want one", c, of2["VS.WEIGHT"], of2["VS.BMI"])
	}
}

func TestSignalsDemo(t *testing.T) {
	dir := demoExtract(t)
	out := t.TempDir()
	stdout, errs, code := runCLI(t, "signals", dir, "--out", out, "--json")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	// Planted in the demo study (dataset/demostudy): five copies of one
	// subject at site 06, weights in pounds at site 07 from visit 4 on.
	for _, want := range []string{"site 06 flagged", "site 07 flagged", "near-identical subjects at site 06: 6 subjects"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, stdout)
		}
	}
	for _, f := range []string{"sites.csv", "site-summary.csv", "subjects.csv", "duplicates.csv", "scores.csv", "signals.json"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Error(err)
		}
	}
}

func TestProposeDecideLint(t *testing.T) {
	dir := demoExtract(t)
	rulesFile := filepath.Join(t.TempDir(), "rules.yaml")
	stdout, errs, code := runCLI(t, "propose", dir, "--rules", rulesFile, "--levels", "visit", "--json")
	if code != exitOK {
		t.Fatalf("propose: exit %d: %s", code, errs)
	}
	// The generator plants transposed blood pressures; the proposer must
	// offer the order rule that catches them.
	if !strings.Contains(stdout, `"VS.DIABP",`) || !strings.Contains(stdout, `"kind": "order"`) {
		t.Fatalf("no DIABP order rule proposed:\n%.2000s", stdout)
	}
	list, _, _ := runCLI(t, "rules", "list", rulesFile, "--status", "proposed", "--json")
	id := ""
	for _, line := range strings.Split(list, "\n") {
		if strings.Contains(line, `"id": "order-`) {
			id = strings.Trim(strings.TrimSpace(strings.TrimPrefix(strings.TrimSpace(line), `"id":`)), `",`)
			break
		}
	}
	if id == "" {
		t.Fatal("no order rule id in rules list")
	}
	if _, errs, code := runCLI(t, "decide", "accept", id, "--rules", rulesFile, "--by", "Test Reviewer", "--note", "per DVP"); code != exitOK {
		t.Fatalf("decide: exit %d: %s", code, errs)
	}
	b, _ := os.ReadFile(rulesFile)
	if !strings.Contains(string(b), "by: Test Reviewer") || !strings.Contains(string(b), "note: per DVP") {
		t.Errorf("decision not recorded in the rule set")
	}
	// Proposing again keeps the decision.
	if _, errs, code := runCLI(t, "propose", dir, "--rules", rulesFile, "--levels", "visit"); code != exitOK {
		t.Fatalf("second propose: exit %d: %s", code, errs)
	}
	after, _, _ := runCLI(t, "rules", "list", rulesFile, "--status", "accepted")
	if !strings.Contains(after, id) {
		t.Errorf("accepted rule %s lost after proposing again:\n%s", id, after)
	}
	if _, errs, code := runCLI(t, "decide", "accept", "nope-0000", "--rules", rulesFile, "--by", "X"); code != exitError || !strings.Contains(errs, "nope-0000") {
		t.Errorf("unknown id: exit %d, stderr %q", code, errs)
	}
	if out, errs, code := runCLI(t, "rules", "lint", rulesFile, "--data", dir); code != exitOK {
		t.Errorf("lint: exit %d: %s %s", code, out, errs)
	}
	// A rule set with an unknown kind fails lint with exit 1 and the line.
	bad := filepath.Join(t.TempDir(), "bad.yaml")
	os.WriteFile(bad, []byte(strings.Replace(string(b), "kind: order", "kind: ordre", 1)), 0o644)
	out, errs, code := runCLI(t, "rules", "lint", bad)
	if code == exitOK || !strings.Contains(out+errs, "ordre") {
		t.Errorf("lint of unknown kind: exit %d, output %q %q", code, out, errs)
	}
}

func TestCheckDemo(t *testing.T) {
	dir := demoExtract(t)
	tmp := t.TempDir()
	rulesFile := filepath.Join(tmp, "rules.yaml")
	if _, errs, code := runCLI(t, "propose", dir, "--rules", rulesFile, "--levels", "visit"); code != exitOK {
		t.Fatalf("propose: exit %d: %s", code, errs)
	}
	if _, errs, code := runCLI(t, "decide", "accept", "--kind", "order", "--rules", rulesFile, "--by", "Test Reviewer", "--note", "test"); code != exitOK {
		t.Fatalf("decide: exit %d: %s", code, errs)
	}
	listing := filepath.Join(tmp, "listing.csv")
	manifest := filepath.Join(tmp, "manifest.json")
	_, errs, code := runCLI(t, "check", dir, "--rules", rulesFile, "--out", listing, "--manifest", manifest, "--summary", filepath.Join(tmp, "summary"))
	if code != exitFindings {
		t.Fatalf("check: exit %d, want 1 (discrepancies found): %s", code, errs)
	}
	rows := readCSV(t, listing)
	if len(rows) == 0 {
		t.Fatal("empty listing")
	}
	for _, f := range []string{manifest, filepath.Join(tmp, "summary", "sites.csv"), filepath.Join(tmp, "summary", "rules.json")} {
		if _, err := os.Stat(f); err != nil {
			t.Error(err)
		}
	}
	// Against itself as the previous listing: everything persists.
	_, errs, code = runCLI(t, "check", dir, "--rules", rulesFile, "--previous", listing, "--out", filepath.Join(tmp, "l2.csv"))
	if code != exitFindings || !strings.Contains(errs, "new 0, persisting") || !strings.Contains(errs, "resolved 0") {
		t.Errorf("rerun against itself: exit %d, stderr %q", code, errs)
	}
	// --fail-on critical: order rules are major, so no failure.
	if _, errs, code := runCLI(t, "check", dir, "--rules", rulesFile, "--fail-on", "critical", "--out", filepath.Join(tmp, "l3.csv")); code != exitOK {
		t.Errorf("--fail-on critical: exit %d: %s", code, errs)
	}
	// Drop a variable the rules read: the run fails and names the rules.
	cut := filepath.Join(tmp, "cut")
	os.MkdirAll(cut, 0o755)
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		b, _ := os.ReadFile(filepath.Join(dir, e.Name()))
		if e.Name() == "vs.csv" {
			var keep []string
			for _, line := range strings.Split(string(b), "\n") {
				if !strings.Contains(line, ",DIABP,") {
					keep = append(keep, line)
				}
			}
			b = []byte(strings.Join(keep, "\n"))
		}
		os.WriteFile(filepath.Join(cut, e.Name()), b, 0o644)
	}
	_, errs, code = runCLI(t, "check", cut, "--rules", rulesFile, "--out", filepath.Join(tmp, "l4.csv"))
	if code != exitError || !strings.Contains(errs, "not evaluable") || !strings.Contains(errs, "VS.DIABP") {
		t.Errorf("dropped DIABP: exit %d, stderr %q", code, errs)
	}
	if _, errs, code := runCLI(t, "check", cut, "--rules", rulesFile, "--allow-unevaluable", "--out", filepath.Join(tmp, "l5.csv")); code == exitError {
		t.Errorf("--allow-unevaluable: exit %d: %s", code, errs)
	}
}

func TestClusterLargeStudyPerClusterHeatmaps(t *testing.T) {
	// 301 variables: four strongly related blocks and noise.
	var b strings.Builder
	for j := 0; j <= heatmapMaxVars; j++ {
		if j > 0 {
			b.WriteByte(',')
		}
		fmt.Fprintf(&b, "V%03d", j)
	}
	b.WriteByte('\n')
	for i := 0; i < 60; i++ {
		for j := 0; j <= heatmapMaxVars; j++ {
			if j > 0 {
				b.WriteByte(',')
			}
			v := float64((i*7919+j*104729)%1000) / 10 // noise
			if j < 40 {
				v = float64(i*(1+j%4)) + float64(j)/100 // four monotone blocks
			}
			fmt.Fprintf(&b, "%g", v)
		}
		b.WriteByte('\n')
	}
	dir := t.TempDir()
	data := filepath.Join(dir, "wide.csv")
	os.WriteFile(data, []byte(b.String()), 0o644)
	out := filepath.Join(dir, "out")
	if _, errs, code := runCLI(t, "cluster", data, "--out", out, "--quiet"); code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if _, err := os.Stat(filepath.Join(out, "heatmap.svg")); err == nil {
		t.Error("heatmap.svg written for more than heatmapMaxVars variables")
	}
	if _, err := os.Stat(filepath.Join(out, "heatmap-cluster-1.svg")); err != nil {
		t.Errorf("no per-cluster heatmap: %v", err)
	}
}

func TestProfileLevel(t *testing.T) {
	dir := demoExtract(t)
	stdout, errs, code := runCLI(t, "profile", dir, "--level", "visit", "--csv", "--quiet")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, want := range []string{"VS.SYSBP", "LB.ALT", "DM.SEX", "SV.STDTC"} {
		if !strings.Contains(stdout, ","+want+",") {
			t.Errorf("visit-level profile lacks %s", want)
		}
	}
	if _, errs, code := runCLI(t, "profile", dir, "--level", "nonsense"); code != exitError {
		t.Errorf("--level nonsense: exit %d, stderr %q", code, errs)
	}
}
