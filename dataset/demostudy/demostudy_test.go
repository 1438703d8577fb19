package demostudy

import (
	"bytes"
	"cmp"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
)

// Generated studies are cached: the tests only read them.
var (
	cacheMu sync.Mutex
	cache   = map[Config]*Study{}
)

func study(t testing.TB, cfg Config) *Study {
	t.Helper()
	cacheMu.Lock()
	defer cacheMu.Unlock()
	if st, ok := cache[cfg]; ok {
		return st
	}
	st, err := Generate(cfg)
	if err != nil {
		t.Fatalf("Generate(%+v): %v", cfg, err)
	}
	cache[cfg] = st
	return st
}

func cfgOf(clean bool, cut int) Config {
	c := DefaultConfig()
	c.Clean, c.Cut = clean, cut
	return c
}

// tab gives access to a form's cells by column name.
type tab struct {
	f   *Form
	col map[string]int
}

func tabOf(t testing.TB, st *Study, name string) tab {
	t.Helper()
	f, ok := st.Forms[name]
	if !ok {
		t.Fatalf("form %q missing", name)
	}
	m := map[string]int{}
	for i, h := range f.Header {
		m[h] = i
	}
	return tab{f, m}
}

func (tb tab) get(row []string, name string) string {
	i, ok := tb.col[name]
	if !ok {
		panic("test: no column " + name + " in " + tb.f.Name)
	}
	return row[i]
}

func (tb tab) num(t testing.TB, row []string, name string) float64 {
	t.Helper()
	x, err := strconv.ParseFloat(tb.get(row, name), 64)
	if err != nil {
		t.Fatalf("%s: %s = %q: %v", tb.f.Name, name, tb.get(row, name), err)
	}
	return x
}

// ident is the identity of a record as _truth.csv writes it: USUBJID|VISITNUM|key.
func ident(usubjid, visitnum, key string) string { return usubjid + "|" + visitnum + "|" + key }

func truthIdents(st *Study, class string) map[string]bool {
	out := map[string]bool{}
	for _, p := range st.Truth {
		if p.Class == class {
			vn := ""
			if p.VisitNum != 0 {
				vn = strconv.FormatFloat(p.VisitNum, 'f', -1, 64)
			}
			out[ident(p.USUBJID, vn, p.Key)] = true
		}
	}
	return out
}

// checks are independent re-implementations of the relationships the package
// documents; each returns the identities of the records that break it.
type check struct {
	name  string
	class string // the planted class the check detects
	run   func(t testing.TB, st *Study) map[string]bool
}

var checks = []check{
	{"SYSBP > DIABP", ClassBPTransposed, checkBP},
	{"AESTDTC <= AEENDTC", ClassAEEndBeforeStart, checkAEDates},
	{"BMI = WEIGHT / HEIGHT^2 within 0.1", ClassBMIMismatch, checkBMI},
	{"CMYN agrees with CM rows", ClassCMGateContradiction, checkCMGate},
	{"HCG only for SEX = F", ClassPregnancyMale, checkHCG},
	{"AESEV agrees with AETOXGR", ClassSeverityGradeMismatch, checkSeverity},
	{"visits on or after RFICDTC", ClassVisitBeforeConsent, checkConsent},
	{"ALT-AST on trend when both in range", ClassLiverEnzymeOutlier, checkLiver},
}

// vsWide returns USUBJID|VISITNUM → VSTESTCD → VSSTRESN.
func vsWide(t testing.TB, st *Study) map[string]map[string]float64 {
	vs := tabOf(t, st, "vs")
	out := map[string]map[string]float64{}
	for _, r := range vs.f.Rows {
		k := vs.get(r, "USUBJID") + "|" + vs.get(r, "VISITNUM")
		if out[k] == nil {
			out[k] = map[string]float64{}
		}
		out[k][vs.get(r, "VSTESTCD")] = vs.num(t, r, "VSSTRESN")
	}
	return out
}

func checkBP(t testing.TB, st *Study) map[string]bool {
	bad := map[string]bool{}
	for k, m := range vsWide(t, st) {
		if m["SYSBP"] <= m["DIABP"] {
			u, vn, _ := strings.Cut(k, "|")
			bad[ident(u, vn, "SYSBP")] = true
		}
	}
	return bad
}

func checkAEDates(t testing.TB, st *Study) map[string]bool {
	ae := tabOf(t, st, "ae")
	bad := map[string]bool{}
	for _, r := range ae.f.Rows {
		s, e := ae.get(r, "AESTDTC"), ae.get(r, "AEENDTC")
		if len(s) == 10 && len(e) == 10 && e < s {
			bad[ident(ae.get(r, "USUBJID"), "", ae.get(r, "AESEQ"))] = true
		}
	}
	return bad
}

func checkBMI(t testing.TB, st *Study) map[string]bool {
	bad := map[string]bool{}
	w := vsWide(t, st)
	for k, m := range w {
		u, vn, _ := strings.Cut(k, "|")
		h, ok := w[u+"|1"]["HEIGHT"]
		if !ok {
			t.Fatalf("%s: no screening HEIGHT", u)
		}
		want := m["WEIGHT"] / (h / 100 * h / 100)
		if math.Abs(m["BMI"]-want) > 0.1 {
			bad[ident(u, vn, "BMI")] = true
		}
	}
	return bad
}

func cmCounts(t testing.TB, st *Study) map[string]int {
	cm := tabOf(t, st, "cm")
	n := map[string]int{}
	for _, r := range cm.f.Rows {
		n[cm.get(r, "USUBJID")]++
	}
	return n
}

func checkCMGate(t testing.TB, st *Study) map[string]bool {
	dm := tabOf(t, st, "dm")
	n := cmCounts(t, st)
	bad := map[string]bool{}
	for _, r := range dm.f.Rows {
		u := dm.get(r, "USUBJID")
		if (dm.get(r, "CMYN") == "Y") != (n[u] > 0) {
			bad[ident(u, "", "CMYN")] = true
		}
	}
	return bad
}

func sexOf(t testing.TB, st *Study) map[string]string {
	dm := tabOf(t, st, "dm")
	out := map[string]string{}
	for _, r := range dm.f.Rows {
		out[dm.get(r, "USUBJID")] = dm.get(r, "SEX")
	}
	return out
}

func checkHCG(t testing.TB, st *Study) map[string]bool {
	lb := tabOf(t, st, "lb")
	sex := sexOf(t, st)
	bad := map[string]bool{}
	for _, r := range lb.f.Rows {
		u := lb.get(r, "USUBJID")
		if lb.get(r, "LBTESTCD") == "HCG" && sex[u] != "F" {
			bad[ident(u, lb.get(r, "VISITNUM"), "HCG")] = true
		}
	}
	return bad
}

func checkSeverity(t testing.TB, st *Study) map[string]bool {
	ae := tabOf(t, st, "ae")
	allowed := map[string]string{"MILD": "1", "MODERATE": "2", "SEVERE": "34"}
	bad := map[string]bool{}
	for _, r := range ae.f.Rows {
		g := ae.get(r, "AETOXGR")
		if len(g) != 1 || !strings.Contains(allowed[ae.get(r, "AESEV")], g) {
			bad[ident(ae.get(r, "USUBJID"), "", ae.get(r, "AESEQ"))] = true
		}
	}
	return bad
}

func consentOf(t testing.TB, st *Study) map[string]string {
	dm := tabOf(t, st, "dm")
	out := map[string]string{}
	for _, r := range dm.f.Rows {
		out[dm.get(r, "USUBJID")] = dm.get(r, "RFICDTC")
	}
	return out
}

// checkConsent flags SV visits before consent; it fails the test when a VS or LB record
// is dated before consent without its SV visit being so.
func checkConsent(t testing.TB, st *Study) map[string]bool {
	consent := consentOf(t, st)
	bad := map[string]bool{}
	sv := tabOf(t, st, "sv")
	for _, r := range sv.f.Rows {
		u := sv.get(r, "USUBJID")
		if sv.get(r, "SVSTDTC") < consent[u] {
			bad[ident(u, sv.get(r, "VISITNUM"), "")] = true
		}
	}
	for _, name := range []string{"vs", "lb"} {
		tb := tabOf(t, st, name)
		dtc := strings.ToUpper(name) + "DTC"
		for _, r := range tb.f.Rows {
			u, vn := tb.get(r, "USUBJID"), tb.get(r, "VISITNUM")
			if tb.get(r, dtc)[:10] < consent[u] && !bad[ident(u, vn, "")] {
				t.Errorf("%s %s visit %s: %s %s before consent %s but SV visit is not", name, u, vn, dtc, tb.get(r, dtc), consent[u])
			}
		}
	}
	return bad
}

func checkLiver(t testing.TB, st *Study) map[string]bool {
	lb := tabOf(t, st, "lb")
	type pair struct{ alt, ast float64 }
	m := map[string]*pair{}
	for _, r := range lb.f.Rows {
		code := lb.get(r, "LBTESTCD")
		if code != "ALT" && code != "AST" {
			continue
		}
		if lb.get(r, "LBNRIND") != "NORMAL" {
			continue
		}
		k := ident(lb.get(r, "USUBJID"), lb.get(r, "VISITNUM"), "ALT")
		if m[k] == nil {
			m[k] = &pair{}
		}
		if code == "ALT" {
			m[k].alt = lb.num(t, r, "LBSTRESN")
		} else {
			m[k].ast = lb.num(t, r, "LBSTRESN")
		}
	}
	bad := map[string]bool{}
	for k, p := range m {
		// Threshold |log(AST/ALT)| > 1 (a factor e): hand-derived bound, the clean model
		// keeps in-range pairs within 0.95 (hand-derived from fillVisit, rounding included).
		if p.alt > 0 && p.ast > 0 && math.Abs(math.Log(p.ast/p.alt)) > 1 {
			bad[k] = true
		}
	}
	return bad
}

func sortedKeys(m map[string]bool) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	slices.Sort(out)
	return out
}

func TestCleanRelationshipsHold(t *testing.T) {
	for _, cut := range []int{1, 2} {
		st := study(t, cfgOf(true, cut))
		if len(st.Truth) != 0 {
			t.Errorf("cut %d clean: %d truth rows, want 0", cut, len(st.Truth))
		}
		for _, c := range checks {
			t.Run(fmt.Sprintf("cut%d/%s", cut, c.name), func(t *testing.T) {
				if bad := c.run(t, st); len(bad) > 0 {
					t.Errorf("%d records break %q, want 0: %v", len(bad), c.name, firstN(sortedKeys(bad), 5))
				}
			})
		}
	}
}

func firstN(s []string, n int) []string { return s[:min(n, len(s))] }

// TestPlantedMatchesChecks verifies, for each record-level class, that the records
// breaking the corresponding relationship are exactly the truth rows of that class:
// every planted record is detectable and no class creates another by accident. The
// one documented overlap: pound weights break the BMI relationship too.
func TestPlantedMatchesChecks(t *testing.T) {
	for _, cut := range []int{1, 2} {
		st := study(t, cfgOf(false, cut))
		for _, c := range checks {
			t.Run(fmt.Sprintf("cut%d/%s", cut, c.class), func(t *testing.T) {
				got := c.run(t, st)
				want := truthIdents(st, c.class)
				if c.class == ClassBMIMismatch {
					for k := range truthIdents(st, ClassWeightInPounds) {
						want[strings.TrimSuffix(k, "WEIGHT")+"BMI"] = true
					}
				}
				for _, k := range sortedKeys(got) {
					if !want[k] {
						t.Errorf("%s breaks %q but is not in truth", k, c.name)
					}
				}
				for _, k := range sortedKeys(want) {
					if !got[k] {
						t.Errorf("truth %s %s does not break %q", c.class, k, c.name)
					}
				}
			})
		}
	}
}

// TestCleanInvariants checks the remaining documented properties of clean data.
func TestCleanInvariants(t *testing.T) {
	for _, cut := range []int{1, 2} {
		st := study(t, cfgOf(true, cut))
		dm, ae, ex, sv := tabOf(t, st, "dm"), tabOf(t, st, "ae"), tabOf(t, st, "ex"), tabOf(t, st, "sv")
		arm := map[string]string{}
		rfst := map[string]string{}
		for _, r := range dm.f.Rows {
			u := dm.get(r, "USUBJID")
			arm[u], rfst[u] = dm.get(r, "ARMCD"), dm.get(r, "RFSTDTC")
			if age, _ := strconv.Atoi(dm.get(r, "AGE")); age < 18 || age > 75 {
				t.Errorf("cut %d %s: AGE %d outside 18–75", cut, u, age)
			}
			if (dm.get(r, "ARMCD") == "") != (rfst[u] == "") {
				t.Errorf("cut %d %s: ARMCD %q but RFSTDTC %q", cut, u, dm.get(r, "ARMCD"), rfst[u])
			}
			if rfst[u] != "" && rfst[u] < dm.get(r, "RFICDTC") {
				t.Errorf("cut %d %s: first dose %s before consent", cut, u, rfst[u])
			}
		}
		// Visits: dates increase with VISITNUM; post-screening visits on or after first
		// dose; nothing after the data cut.
		last := map[string]string{}
		for _, r := range sv.f.Rows {
			u, d := sv.get(r, "USUBJID"), sv.get(r, "SVSTDTC")
			if d <= last[u] || d > st.DataCut {
				t.Errorf("cut %d %s visit %s: date %s after previous %s or after cut %s", cut, u, sv.get(r, "VISITNUM"), d, last[u], st.DataCut)
			}
			if sv.get(r, "VISITNUM") != "1" && d < rfst[u] {
				t.Errorf("cut %d %s: visit %s before first dose", cut, u, sv.get(r, "VISITNUM"))
			}
			last[u] = d
		}
		// AEOUT agrees with AEENDTC; AEs start on or after first dose.
		for _, r := range ae.f.Rows {
			u, out, end := ae.get(r, "USUBJID"), ae.get(r, "AEOUT"), ae.get(r, "AEENDTC")
			resolved := strings.HasPrefix(out, "RECOVERED/RESOLVED")
			if resolved != (end != "") {
				t.Errorf("cut %d %s AE %s: AEOUT %q with AEENDTC %q", cut, u, ae.get(r, "AESEQ"), out, end)
			}
			if s := ae.get(r, "AESTDTC"); s < rfst[u][:len(s)] {
				t.Errorf("cut %d %s AE %s: start %s before first dose %s", cut, u, ae.get(r, "AESEQ"), s, rfst[u])
			}
		}
		// EX dose by arm.
		dose := map[string]string{"PBO": "0", "CFX10": "10", "CFX20": "20"}
		for _, r := range ex.f.Rows {
			u := ex.get(r, "USUBJID")
			if got := ex.get(r, "EXDOSE"); got != dose[arm[u]] {
				t.Errorf("cut %d %s: EXDOSE %s in arm %q", cut, u, got, arm[u])
			}
		}
		// CM: 1–4 records for subjects with any.
		for u, n := range cmCounts(t, st) {
			if n < 1 || n > 4 {
				t.Errorf("cut %d %s: %d CM records, want 1–4", cut, u, n)
			}
		}
	}
}

func TestDeterministic(t *testing.T) {
	for _, cfg := range []Config{cfgOf(false, 1), cfgOf(false, 2)} {
		d1, d2 := t.TempDir(), t.TempDir()
		for _, d := range []string{d1, d2} {
			st, err := Generate(cfg)
			if err != nil {
				t.Fatal(err)
			}
			if err := st.WriteCSV(d); err != nil {
				t.Fatal(err)
			}
		}
		names := []string{"ae", "cm", "dm", "ds", "ex", "lb", "sv", "_truth", "vs"}
		for _, n := range names {
			a, err := os.ReadFile(filepath.Join(d1, n+".csv"))
			if err != nil {
				t.Fatal(err)
			}
			b, err := os.ReadFile(filepath.Join(d2, n+".csv"))
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(a, b) {
				t.Errorf("%+v: %s.csv differs between two runs", cfg, n)
			}
			if n != "_truth" && bytes.Count(a, []byte("\n")) < 2 {
				t.Errorf("%+v: %s.csv has no data rows", cfg, n)
			}
		}
	}
	other := cfgOf(false, 1)
	other.Seed++
	a, b := study(t, cfgOf(false, 1)), study(t, other)
	if slices.EqualFunc(a.Forms["vs"].Rows, b.Forms["vs"].Rows, slices.Equal) {
		t.Errorf("seeds %d and %d give the same VS rows", DefaultConfig().Seed, other.Seed)
	}
}

// TestWriteCSVRoundTrip reads the written files back with encoding/csv.
func TestWriteCSVRoundTrip(t *testing.T) {
	st := study(t, cfgOf(false, 1))
	dir := t.TempDir()
	if err := st.WriteCSV(dir); err != nil {
		t.Fatal(err)
	}
	read := func(name string) [][]string {
		f, err := os.Open(filepath.Join(dir, name+".csv"))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		recs, err := csv.NewReader(f).ReadAll()
		if err != nil {
			t.Fatalf("%s.csv: %v", name, err)
		}
		return recs
	}
	for name, f := range st.Forms {
		recs := read(name)
		if !slices.Equal(recs[0], f.Header) || !slices.EqualFunc(recs[1:], f.Rows, slices.Equal) {
			t.Errorf("%s.csv does not read back as Forms[%q]", name, name)
		}
	}
	truth := read("_truth")
	if len(truth) != len(st.Truth)+1 || truth[0][0] != "class" {
		t.Fatalf("_truth.csv: %d records, want header + %d", len(truth), len(st.Truth))
	}
	for i, p := range st.Truth {
		if r := truth[i+1]; r[0] != p.Class || r[2] != p.USUBJID || r[5] != p.Key || r[6] != p.Detail {
			t.Errorf("_truth.csv row %d = %q, want %+v", i+2, r, p)
		}
	}

	// A regular file where the directory should be is an error, not a panic.
	file := filepath.Join(dir, "vs.csv")
	if err := st.WriteCSV(filepath.Join(file, "sub")); err == nil {
		t.Errorf("WriteCSV under a regular file: no error")
	}
}

func TestConfigErrors(t *testing.T) {
	good := DefaultConfig()
	tests := []struct {
		name string
		edit func(*Config)
		want string
	}{
		{"cut 0", func(c *Config) { c.Cut = 0 }, "Cut = 0"},
		{"cut 3", func(c *Config) { c.Cut = 3 }, "Cut = 3"},
		{"one site", func(c *Config) { c.Sites = 1 }, "Sites = 1"},
		{"too few subjects", func(c *Config) { c.Subjects = 100 }, "Subjects = 100"},
		{"negative subjects", func(c *Config) { c.Subjects = -5 }, "Subjects = -5"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := good
			tc.edit(&c)
			_, err := Generate(c)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Generate(%+v) error = %v, want one mentioning %q", c, err, tc.want)
			}
		})
	}
}

// TestTruthPointsToRecords checks that every truth row names an existing record of its
// domain, at its site, and that no planted record has a partial date.
func TestTruthPointsToRecords(t *testing.T) {
	for _, cut := range []int{1, 2} {
		st := study(t, cfgOf(false, cut))
		dm := tabOf(t, st, "dm")
		site := map[string]string{}
		for _, r := range dm.f.Rows {
			site[dm.get(r, "USUBJID")] = dm.get(r, "SITEID")
		}
		exists := map[string]bool{}
		index := func(form, visitCol, keyCol string) {
			tb := tabOf(t, st, form)
			for _, r := range tb.f.Rows {
				vn, key := "", ""
				if visitCol != "" {
					vn = tb.get(r, visitCol)
				}
				if keyCol != "" {
					key = tb.get(r, keyCol)
				}
				exists[strings.ToUpper(form)+"|"+ident(tb.get(r, "USUBJID"), vn, key)] = true
			}
		}
		index("vs", "VISITNUM", "VSTESTCD")
		index("lb", "VISITNUM", "LBTESTCD")
		index("ae", "", "AESEQ")
		index("sv", "VISITNUM", "")
		index("dm", "", "")
		for _, r := range dm.f.Rows {
			exists["DM|"+ident(dm.get(r, "USUBJID"), "", "CMYN")] = true
		}
		ae := tabOf(t, st, "ae")
		aeStart := map[string]string{}
		for _, r := range ae.f.Rows {
			aeStart[dm.get(r, "USUBJID")+"|"+ae.get(r, "AESEQ")] = ae.get(r, "AESTDTC")
		}
		if len(st.Truth) == 0 {
			t.Fatalf("cut %d: no truth rows", cut)
		}
		for _, p := range st.Truth {
			vn := ""
			if p.VisitNum != 0 {
				vn = strconv.FormatFloat(p.VisitNum, 'f', -1, 64)
			}
			if !exists[p.Domain+"|"+ident(p.USUBJID, vn, p.Key)] {
				t.Errorf("cut %d: truth %+v names no record", cut, p)
			}
			if site[p.USUBJID] != p.SiteID {
				t.Errorf("cut %d: truth %+v: SITEID %q, DM says %q", cut, p, p.SiteID, site[p.USUBJID])
			}
			if p.Domain == "AE" && len(aeStart[p.USUBJID+"|"+p.Key]) != 10 {
				t.Errorf("cut %d: truth %+v on an AE with partial start %q", cut, p, aeStart[p.USUBJID+"|"+p.Key])
			}
			if !slices.Contains(ProblemClasses(), p.Class) || p.Detail == "" {
				t.Errorf("cut %d: truth %+v: unknown class or empty detail", cut, p)
			}
		}
	}
}

// TestPlantedRates checks the first cut at the default configuration: each
// record-level class has at least 3 records and 0.5–2% of the records it can affect.
func TestPlantedRates(t *testing.T) {
	st := study(t, cfgOf(false, 1))
	count := func(form string, keep func(tb tab, r []string) bool) int {
		tb := tabOf(t, st, form)
		n := 0
		for _, r := range tb.f.Rows {
			if keep(tb, r) {
				n++
			}
		}
		return n
	}
	test := func(code string) func(tab, []string) bool {
		return func(tb tab, r []string) bool { return tb.get(r, strings.ToUpper(tb.f.Name)+"TESTCD") == code }
	}
	sex := sexOf(t, st)
	denom := map[string]int{
		ClassBPTransposed:          count("vs", test("SYSBP")),
		ClassBMIMismatch:           count("vs", test("BMI")),
		ClassAEEndBeforeStart:      count("ae", func(tab, []string) bool { return true }),
		ClassSeverityGradeMismatch: count("ae", func(tab, []string) bool { return true }),
		ClassPregnancyMale: count("lb", func(tb tab, r []string) bool {
			return tb.get(r, "LBTESTCD") == "ALT" && tb.get(r, "VISITNUM") == "1" && sex[tb.get(r, "USUBJID")] == "M"
		}),
		ClassCMGateContradiction: len(cmCounts(t, st)),
		ClassLiverEnzymeOutlier:  count("lb", test("ALT")),
		ClassVisitBeforeConsent:  count("sv", func(tb tab, r []string) bool { return tb.get(r, "VISITNUM") == "1" }),
	}
	for _, rc := range recordClasses {
		n := len(truthIdents(st, rc.name))
		rate := float64(n) / float64(denom[rc.name])
		if n < 3 || rate < 0.005 || rate > 0.02 {
			t.Errorf("%s: %d of %d records (%.2f%%), want at least 3 and 0.5–2%%", rc.name, n, denom[rc.name], 100*rate)
		}
	}
}

// TestSiteLevelClasses checks the design of the two site-level classes.
func TestSiteLevelClasses(t *testing.T) {
	for _, cut := range []int{1, 2} {
		st := study(t, cfgOf(false, cut))
		dm, vs := tabOf(t, st, "dm"), tabOf(t, st, "vs")
		site := map[string]string{}
		for _, r := range dm.f.Rows {
			site[dm.get(r, "USUBJID")] = dm.get(r, "SITEID")
		}
		// Pounds: one site; every WEIGHT record there from VISITNUM 4 on, and no other.
		pounds := truthIdents(st, ClassWeightInPounds)
		var poundSite string
		for _, p := range st.Truth {
			if p.Class == ClassWeightInPounds {
				if poundSite != "" && p.SiteID != poundSite {
					t.Fatalf("cut %d: pound weights at sites %s and %s", cut, poundSite, p.SiteID)
				}
				poundSite = p.SiteID
			}
		}
		var ratio []float64
		base := map[string]float64{}
		for _, r := range vs.f.Rows {
			if vs.get(r, "VSTESTCD") == "WEIGHT" && vs.get(r, "VISITNUM") == "2" {
				base[vs.get(r, "USUBJID")] = vs.num(t, r, "VSSTRESN")
			}
		}
		for _, r := range vs.f.Rows {
			u, vn := vs.get(r, "USUBJID"), vs.get(r, "VISITNUM")
			if vs.get(r, "VSTESTCD") != "WEIGHT" {
				continue
			}
			k := ident(u, vn, "WEIGHT")
			want := site[u] == poundSite && vn >= "4"
			if pounds[k] != want {
				t.Errorf("cut %d: %s (site %s): in pound truth = %v, want %v", cut, k, site[u], pounds[k], want)
			}
			if pounds[k] && base[u] > 0 {
				ratio = append(ratio, vs.num(t, r, "VSSTRESN")/base[u])
			}
			if vs.get(r, "VSORRESU") != "kg" {
				t.Errorf("cut %d: %s: unit %q, want kg", cut, k, vs.get(r, "VSORRESU"))
			}
		}
		slices.Sort(ratio)
		// 1 kg = 2.20462 lb (1 lb = 0.45359237 kg exactly); visit-to-visit change is small.
		if len(ratio) < 10 || math.Abs(ratio[len(ratio)/2]-2.2046) > 0.1 {
			t.Errorf("cut %d: %d pound records, median ratio to randomisation weight %v, want ≈ 2.2046", cut, len(ratio), ratio)
		}

		// Fabricated: 5 subjects at one site, other than the pound site, each within
		// small noise of one donor at the same site.
		var fab []Problem
		for _, p := range st.Truth {
			if p.Class == ClassFabricatedSubjects {
				fab = append(fab, p)
			}
		}
		if len(fab) != 5 {
			t.Fatalf("cut %d: %d fabricated subjects, want 5", cut, len(fab))
		}
		w := vsWide(t, st)
		for _, p := range fab {
			if p.SiteID != fab[0].SiteID || p.SiteID == poundSite {
				t.Errorf("cut %d: fabricated %s at site %s (first %s, pound site %s)", cut, p.USUBJID, p.SiteID, fab[0].SiteID, poundSite)
			}
			donor := strings.Fields(p.Detail)[2]
			for _, test := range []struct {
				code string
				tol  float64
			}{{"SYSBP", 2}, {"DIABP", 2}, {"PULSE", 2}, {"HEIGHT", 1}} {
				got, want := w[p.USUBJID+"|1"][test.code], w[donor+"|1"][test.code]
				if math.Abs(got-want) > test.tol {
					t.Errorf("cut %d: fabricated %s screening %s = %v, donor %s %v", cut, p.USUBJID, test.code, got, donor, want)
				}
			}
		}
	}
}

// TestCut2 checks what the second cut changes: same subjects and records, new
// subjects and visits, a third of each class's problems corrected, new ones planted.
func TestCut2(t *testing.T) {
	s1, s2 := study(t, cfgOf(false, 1)), study(t, cfgOf(false, 2))
	if s2.DataCut <= s1.DataCut {
		t.Errorf("cut dates %s, %s not increasing", s1.DataCut, s2.DataCut)
	}
	dm1, dm2 := tabOf(t, s1, "dm"), tabOf(t, s2, "dm")
	subj2 := map[string][]string{}
	for _, r := range dm2.f.Rows {
		subj2[dm2.get(r, "USUBJID")] = r
	}
	for _, r := range dm1.f.Rows {
		u := dm1.get(r, "USUBJID")
		r2, ok := subj2[u]
		if !ok {
			t.Errorf("cut-1 subject %s missing from cut 2", u)
			continue
		}
		for _, c := range []string{"SITEID", "SEX", "BRTHDTC", "RFICDTC", "RACE"} {
			if dm1.get(r, c) != dm2.get(r2, c) {
				t.Errorf("%s: %s %q in cut 1, %q in cut 2", u, c, dm1.get(r, c), dm2.get(r2, c))
			}
		}
	}
	if want := len(dm1.f.Rows) + DefaultConfig().Subjects/5; len(dm2.f.Rows) != want {
		t.Errorf("cut 2 has %d subjects, want %d", len(dm2.f.Rows), want)
	}
	if len(s2.Forms["sv"].Rows) <= len(s1.Forms["sv"].Rows) {
		t.Errorf("cut 2 has no more visits than cut 1")
	}

	// VS values agree between cuts except where either cut's truth names the record.
	planted := map[string]bool{}
	for _, st := range []*Study{s1, s2} {
		for _, p := range st.Truth {
			if p.Domain == "VS" {
				planted[p.USUBJID+"|"+strconv.Itoa(int(p.VisitNum))] = true
			}
		}
	}
	vs1, vs2 := vsWide(t, s1), vsWide(t, s2)
	for k, m := range vs1 {
		if planted[k] {
			continue
		}
		for code, x := range m {
			if y := vs2[k][code]; x != y {
				t.Errorf("%s %s: %v in cut 1, %v in cut 2", k, code, x, y)
			}
		}
	}

	for _, rc := range recordClasses {
		t1, t2 := truthIdents(s1, rc.name), truthIdents(s2, rc.name)
		fixed, added := 0, 0
		for k := range t1 {
			if !t2[k] {
				fixed++
			}
		}
		for k := range t2 {
			if !t1[k] {
				added++
			}
		}
		if want := int(math.Round(float64(len(t1)) / 3)); fixed != want {
			t.Errorf("%s: %d of %d cut-1 problems corrected in cut 2, want %d", rc.name, fixed, len(t1), want)
		}
		if added == 0 {
			t.Errorf("%s: no new problems in cut 2, want at least 1", rc.name)
		}
	}
	// Persisting problems keep their detail.
	d1 := map[string]string{}
	for _, p := range s1.Truth {
		d1[p.Class+"|"+p.USUBJID+"|"+fmt.Sprint(p.VisitNum)+"|"+p.Key] = p.Detail
	}
	for _, p := range s2.Truth {
		if d, ok := d1[p.Class+"|"+p.USUBJID+"|"+fmt.Sprint(p.VisitNum)+"|"+p.Key]; ok && d != p.Detail {
			t.Errorf("%s %s: detail changed between cuts: %q → %q", p.Class, p.USUBJID, d, p.Detail)
		}
	}
	if n1, n2 := len(truthIdents(s1, ClassWeightInPounds)), len(truthIdents(s2, ClassWeightInPounds)); n2 <= n1 {
		t.Errorf("pound records %d in cut 1, %d in cut 2: want more in cut 2", n1, n2)
	}
}

// TestRowOrder checks that every form is sorted by USUBJID, VISITNUM and sequence
// number, and that truth is sorted.
func TestRowOrder(t *testing.T) {
	st := study(t, cfgOf(false, 1))
	for _, name := range []string{"dm", "vs", "lb", "ae", "cm", "ex", "ds", "sv"} {
		tb := tabOf(t, st, name)
		seqCol := strings.ToUpper(name) + "SEQ"
		key := func(r []string) []float64 {
			var k []float64
			for _, c := range []string{"VISITNUM", seqCol} {
				if i, ok := tb.col[c]; ok {
					x, _ := strconv.ParseFloat(r[i], 64)
					k = append(k, x)
				}
			}
			return k
		}
		for i := 1; i < len(tb.f.Rows); i++ {
			a, b := tb.f.Rows[i-1], tb.f.Rows[i]
			c := cmp.Compare(tb.get(a, "USUBJID"), tb.get(b, "USUBJID"))
			if c == 0 {
				c = slices.Compare(key(a), key(b))
			}
			if c >= 0 {
				t.Fatalf("%s rows %d and %d out of order: %v / %v", name, i, i+1, a, b)
			}
		}
		for _, r := range tb.f.Rows {
			if len(r) != len(tb.f.Header) {
				t.Fatalf("%s: row has %d cells, header %d", name, len(r), len(tb.f.Header))
			}
		}
	}
	if !slices.IsSortedFunc(st.Truth, func(a, b Problem) int {
		return cmp.Or(cmp.Compare(a.Class, b.Class), cmp.Compare(a.USUBJID, b.USUBJID))
	}) {
		t.Errorf("truth not sorted by class and USUBJID")
	}
}

func BenchmarkGenerate(b *testing.B) {
	for _, tc := range []struct {
		name          string
		subjects, cut int
	}{{"600/cut1", 600, 1}, {"600/cut2", 600, 2}, {"2400/cut1", 2400, 1}} {
		b.Run(tc.name, func(b *testing.B) {
			cfg := DefaultConfig()
			cfg.Subjects, cfg.Cut = tc.subjects, tc.cut
			b.ReportAllocs()
			for b.Loop() {
				if _, err := Generate(cfg); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
