package signals

import (
	"context"
	"encoding/json"
	"slices"
	"sync"
	"testing"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/dataset/demostudy"
)

type demo struct {
	study          *demostudy.Study
	subject, visit *dataset.Table
	report         *Report
}

var (
	demoOnce  [2]sync.Once
	demoCache [2]*demo
	demoErr   [2]error
)

// loadDemo generates the demo study (planted or clean, default seed), writes
// and reads it back as an SDTM folder, shapes it at subject and visit level and
// runs Run with default options; the result is shared by the tests.
func loadDemo(t *testing.T, clean bool) *demo {
	t.Helper()
	k := 0
	if clean {
		k = 1
	}
	demoOnce[k].Do(func() {
		cfg := demostudy.DefaultConfig()
		cfg.Clean = clean
		d := &demo{}
		if d.study, demoErr[k] = demostudy.Generate(cfg); demoErr[k] != nil {
			return
		}
		dir := t.TempDir()
		if demoErr[k] = d.study.WriteCSV(dir); demoErr[k] != nil {
			return
		}
		s, err := dataset.Open(dir, dataset.Options{})
		if err != nil {
			demoErr[k] = err
			return
		}
		if d.subject, _, demoErr[k] = s.Shape(dataset.Level{Kind: dataset.LevelSubject}, dataset.ShapeOptions{}); demoErr[k] != nil {
			return
		}
		if d.visit, _, demoErr[k] = s.Shape(dataset.Level{Kind: dataset.LevelVisit}, dataset.ShapeOptions{}); demoErr[k] != nil {
			return
		}
		d.report, demoErr[k] = Run(context.Background(), d.subject, d.visit, Options{})
		demoCache[k] = d
	})
	if demoErr[k] != nil {
		t.Fatal(demoErr[k])
	}
	return demoCache[k]
}

// TestDemoFabricated checks that the 5 fabricated subjects of the demo study
// (demostudy truth class fabricated_subjects) are flagged together, with their
// donor, as one duplicate group at their site, and nothing else is.
func TestDemoFabricated(t *testing.T) {
	d := loadDemo(t, false)
	var fab []string
	site := ""
	for _, p := range d.study.Truth {
		if p.Class == demostudy.ClassFabricatedSubjects {
			fab = append(fab, p.USUBJID)
			site = p.SiteID
		}
	}
	if len(fab) != 5 {
		t.Fatalf("demo truth has %d fabricated subjects, want 5", len(fab))
	}
	groups := d.report.Duplicates.Groups
	if len(groups) != 1 {
		t.Fatalf("got %d duplicate groups, want 1: %+v", len(groups), groups)
	}
	g := groups[0]
	var members []string
	for _, i := range g.Rows {
		members = append(members, d.report.SubjectIDs[i])
	}
	for _, f := range fab {
		if !slices.Contains(members, f) {
			t.Errorf("fabricated subject %s not in the duplicate group %v", f, members)
		}
	}
	if g.Site != site {
		t.Errorf("group site %q, want %q", g.Site, site)
	}
	// The group is the 5 copies plus their donor (demostudy: "near-copies of that donor").
	if len(members) != 6 {
		t.Errorf("group has %d members %v, want 6 (5 copies and the donor)", len(members), members)
	}
	if want := 6 * 5 / 2; g.Pairs != want {
		t.Errorf("group has %d flagged pairs, want all %d", g.Pairs, want)
	}
	for _, p := range d.report.Duplicates.Pairs {
		if len(p.Agree) == 0 {
			t.Errorf("pair %s-%s lists no agreeing variable", d.report.SubjectIDs[p.A], d.report.SubjectIDs[p.B])
		}
	}
	rows := DuplicatesCSV(d.report)
	if len(rows) != 1+15 {
		t.Errorf("DuplicatesCSV has %d rows, want header + 15", len(rows))
	}
}

// TestDemoPoundSite checks that the site whose weights are in pounds from
// visit 4 on (truth class weight_in_pounds) is flagged by the distribution test
// on VS.WEIGHT with a median ratio near 2.20462 at the affected visits, and by
// the relationship test of VS.WEIGHT with VS.BMI.
func TestDemoPoundSite(t *testing.T) {
	d := loadDemo(t, false)
	site := ""
	for _, p := range d.study.Truth {
		if p.Class == demostudy.ClassWeightInPounds {
			site = p.SiteID
			break
		}
	}
	if site == "" {
		t.Fatal("demo truth has no pound site")
	}
	var shifted []string
	for _, s := range d.report.Shifts {
		if !s.Flag {
			continue
		}
		if s.Site != site || s.Var != "VS.WEIGHT" {
			t.Errorf("unexpected flagged shift: %s %s %s ratio %.3g q %.3g", s.Site, s.Var, s.Stratum, s.Ratio, s.Q)
			continue
		}
		shifted = append(shifted, s.Stratum)
		if s.Ratio < 2.0 || s.Ratio > 2.5 {
			t.Errorf("site %s %s %s: median ratio %.4g, want about 2.2 (kg → lb)", site, s.Var, s.Stratum, s.Ratio)
		}
	}
	if want := []string{"VISITNUM=4", "VISITNUM=5", "VISITNUM=6"}; !slices.Equal(shifted, want) {
		t.Errorf("flagged weight strata at site %s: %v, want %v", site, shifted, want)
	}
	rel := false
	for _, x := range d.report.Relations {
		if x.Flag && x.Site == site && ((x.X == "VS.BMI" && x.Y == "VS.WEIGHT") || (x.X == "VS.WEIGHT" && x.Y == "VS.BMI")) {
			rel = true
		}
	}
	if !rel {
		t.Errorf("relationship VS.WEIGHT ~ VS.BMI not flagged at site %s", site)
	}
	for _, s := range d.report.SiteSignals {
		if s.Site == site && (!s.Flagged || s.MaxRatioVar != "VS.WEIGHT") {
			t.Errorf("site summary %+v: want flagged with VS.WEIGHT", s)
		}
	}
}

// TestDemoClean checks that on the clean demo study (same seed, nothing
// planted) no site test and no duplicate pair is flagged at the defaults.
func TestDemoClean(t *testing.T) {
	d := loadDemo(t, true)
	if n := len(d.report.Duplicates.Pairs); n != 0 {
		t.Errorf("clean study: %d duplicate pairs flagged, want 0", n)
	}
	for _, x := range d.report.Relations {
		if x.Flag {
			t.Errorf("clean study: relationship %s ~ %s flagged at site %s (q %.3g)", x.X, x.Y, x.Site, x.Q)
		}
	}
	for _, x := range d.report.Shifts {
		if x.Flag {
			t.Errorf("clean study: shift of %s %s flagged at site %s (q %.3g)", x.Var, x.Stratum, x.Site, x.Q)
		}
	}
	if len(d.report.Relations) == 0 || len(d.report.Shifts) == 0 {
		t.Errorf("clean study: %d relationship and %d distribution tests, want some of each", len(d.report.Relations), len(d.report.Shifts))
	}
	for _, s := range d.report.SiteSignals {
		if s.Flagged {
			t.Errorf("clean study: site %s flagged: %+v", s.Site, s)
		}
	}
}

// TestDemoScoresAndOutputs checks the planted study's site ranking (the
// fabricated and pound sites are the two worst by signals), the clustering
// summary and that every writer's rows have the header's width and JSON
// encodes.
func TestDemoScoresAndOutputs(t *testing.T) {
	d := loadDemo(t, false)
	var siteRank []string
	for _, s := range d.report.Scores {
		if s.Unit == UnitSite {
			siteRank = append(siteRank, s.ID)
		}
	}
	if len(siteRank) != 14 {
		t.Fatalf("%d site scores, want 14", len(siteRank))
	}
	if got := siteRank[:2]; !(slices.Contains(got, "06") && slices.Contains(got, "07")) {
		t.Errorf("worst two sites %v, want 06 and 07 (fabricated and pound sites at the default seed)", got)
	}
	if d.report.Clusters == nil {
		t.Fatalf("no clusters: %s", d.report.ClusterNote)
	}
	total := 0
	for _, c := range d.report.Clusters.PerSite {
		total += c.N
	}
	if total != d.report.Subjects {
		t.Errorf("clusters per site count %d subjects, want %d", total, d.report.Subjects)
	}
	for name, tab := range map[string][][]string{"sites": SitesCSV(d.report), "site summary": SiteSummaryCSV(d.report),
		"subjects": SubjectsCSV(d.report), "duplicates": DuplicatesCSV(d.report), "scores": ScoresCSV(d.report)} {
		if len(tab) < 2 {
			t.Errorf("%s: %d rows", name, len(tab))
		}
		for i, row := range tab {
			if len(row) != len(tab[0]) {
				t.Errorf("%s row %d has %d fields, header %d", name, i, len(row), len(tab[0]))
			}
		}
	}
	b, err := JSON(d.report)
	if err != nil {
		t.Fatal(err)
	}
	var doc map[string]any
	if err := json.Unmarshal(b, &doc); err != nil || doc["schema"] != JSONSchema {
		t.Errorf("JSON: %v, schema %v", err, doc["schema"])
	}
}

func TestRunErrors(t *testing.T) {
	d := loadDemo(t, true)
	ctx := context.Background()
	cases := []struct {
		name string
		o    Options
	}{
		{"unknown pair", Options{Pairs: [][2]string{{"VS.SYSBP", "NOPE"}}}},
		{"unknown shift variable", Options{ShiftVars: []string{"NOPE"}}},
		{"unknown weight", Options{Weights: map[string]float64{"NOPE": 2}}},
	}
	for _, c := range cases {
		if _, err := Run(ctx, d.subject, d.visit, c.o); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
	if _, err := Run(ctx, nil, nil, Options{}); err == nil {
		t.Error("nil subject table: no error")
	}
}
