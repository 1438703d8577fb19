package cluster

import "testing"

func TestDependencies(t *testing.T) {
	vars := []VarInfo{
		{Name: "VS.SYSBP", Domain: "VS", TestCode: "SYSBP", Source: "VSSTRESN"},      // 0
		{Name: "VS.DIABP", Domain: "VS", TestCode: "DIABP", Source: "VSSTRESN"},      // 1
		{Name: "LB.CREAT", Domain: "LB", TestCode: "CREAT", Source: "LBSTRESN"},      // 2
		{Name: "DM.SEX", Domain: "DM", Source: "SEX"},                                // 3
		{Name: "CMYN", Domain: "DM", Source: "CMYN"},                                 // 4
		{Name: "CM.ANY", Domain: "CM", Source: "CMTRT", Derived: "any"},              // 5
		{Name: "SV.STDTC", Domain: "SV", Source: "SVSTDTC", IsDate: true},            // 6
		{Name: "RFICDTC", Domain: "DM", Source: "RFICDTC", IsDate: true},             // 7
		{Name: "VS.SYSBP.BL", Domain: "VS2", TestCode: "SYSBP", Derived: "baseline"}, // 8
		{Name: "LB.ALT", Domain: "LB", TestCode: "ALT", Source: "LBSTRESN"},          // 9
	}
	pairs := []PairInfo{
		{A: 0, B: 1, Strength: 0.7, Q: 1e-9},  // same domain: left out
		{A: 2, B: 3, Strength: 0.6, Q: 1e-9},  // unexpected across forms
		{A: 4, B: 5, Strength: 0.95, Q: 1e-9}, // gate
		{A: 6, B: 7, Strength: 0.99, Q: 1e-9}, // dates
		{A: 0, B: 8, Strength: 0.8, Q: 1e-9},  // same test
		{A: 9, B: 3, Strength: 0.2, Q: 1e-9},  // too weak
		{A: 9, B: 0, Strength: 0.5, Q: 0.2},   // not significant
		{A: 9, B: 1, Strength: 0.31, Q: 0.001},
	}
	got := Dependencies(vars, pairs, DepOptions{})
	want := []struct {
		a, b, trivial string
	}{
		{"LB.CREAT", "DM.SEX", ""},
		{"LB.ALT", "VS.DIABP", ""},
		{"SV.STDTC", "RFICDTC", "both calendar dates"},
		{"CMYN", "CM.ANY", "gate question and its records"},
		{"VS.SYSBP", "VS.SYSBP.BL", "same test"},
	}
	if len(got) != len(want) {
		t.Fatalf("got %d dependencies, want %d: %+v", len(got), len(want), got)
	}
	for i, w := range want {
		g := got[i]
		if vars[g.A].Name != w.a || vars[g.B].Name != w.b || g.Trivial != w.trivial {
			t.Errorf("dependency %d = %s–%s (%q), want %s–%s (%q)", i, vars[g.A].Name, vars[g.B].Name, g.Trivial, w.a, w.b, w.trivial)
		}
	}
}
