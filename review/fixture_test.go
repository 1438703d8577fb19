package review

import (
	"context"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/dataset/demostudy"
	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
)

var fixedNow = time.Date(2026, 2, 3, 10, 0, 0, 0, time.UTC)

// demo holds the invented demo study and a rule set proposed from it, made once per
// test binary.
var demo struct {
	once  sync.Once
	dir   string
	study *dataset.Study
	rules []byte
	err   error
}

func TestMain(m *testing.M) {
	code := m.Run()
	if demo.dir != "" {
		os.RemoveAll(demo.dir)
	}
	os.Exit(code)
}

// demoFixture returns the demo study and the path of a fresh copy of its proposed rule
// set in a temporary folder of t's own: the rules package's Propose at visit and subject
// level, with the association engine's pairs as hints, merged and saved.
func demoFixture(t testing.TB) (*dataset.Study, string) {
	t.Helper()
	demo.once.Do(func() {
		demo.dir, demo.err = os.MkdirTemp("", "crossform-review-demo")
		if demo.err != nil {
			return
		}
		demo.err = makeDemo(filepath.Join(demo.dir, "extract-1"))
	})
	if demo.err != nil {
		t.Fatal(demo.err)
	}
	path := filepath.Join(t.TempDir(), "rules.yaml")
	if err := os.WriteFile(path, demo.rules, 0o644); err != nil {
		t.Fatal(err)
	}
	return demo.study, path
}

func makeDemo(dir string) error {
	st, err := demostudy.Generate(demostudy.DefaultConfig())
	if err != nil {
		return err
	}
	if err := st.WriteCSV(dir); err != nil {
		return err
	}
	if demo.study, err = dataset.Open(dir, dataset.Options{}); err != nil {
		return err
	}
	rs := rules.New(filepath.Join(demo.dir, "rules.yaml"))
	for _, lv := range []string{dataset.LevelVisit, dataset.LevelSubject} {
		t, _, err := demo.study.Shape(dataset.Level{Kind: lv}, dataset.ShapeOptions{})
		if err != nil {
			return err
		}
		m, err := assoc.AllPairs(context.Background(), t, assoc.Options{})
		if err != nil {
			return err
		}
		var hints []rules.Hint
		for _, p := range m.Pairs {
			if p.Skip == assoc.NotSkipped {
				hints = append(hints, rules.Hint{A: m.Names[p.I], B: m.Names[p.J], Measure: p.Measure.String(), Strength: p.Strength, Q: p.Q})
			}
		}
		o := rules.DefaultProposeOptions()
		o.Now = fixedNow
		ps, err := rules.Propose(t, lv, hints, o)
		if err != nil {
			return err
		}
		rules.Merge(rs, ps, rules.Fingerprint(t))
	}
	if err := rs.Save(); err != nil {
		return err
	}
	demo.rules, err = os.ReadFile(rs.Path)
	return err
}

// smallRuleSet writes a rule set of three proposed rules to a new folder and returns its
// path; the rules are made by hand with the rules package's types.
func smallRuleSet(t testing.TB) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "rules.yaml")
	rs := rules.New(path)
	mk := func(x, y string) *rules.Rule {
		return &rules.Rule{Kind: rules.KindOrder, Level: "visit", Vars: []string{x, y}, Params: map[string]any{"tolerance": 0},
			Statement: x + " is on or before " + y + ".", Query: "Please check {" + x + "}.", Severity: rules.Major,
			History: []rules.Event{{At: fixedNow, By: "crossform", Action: "proposed"}}}
	}
	rules.Merge(rs, []*rules.Rule{mk("DM.RFICDTC", "SV.STDTC"), mk("VS.DIABP", "VS.SYSBP"), mk("DM.BRTHDTC", "DM.RFICDTC")}, "sha256:test")
	if err := rs.Save(); err != nil {
		t.Fatal(err)
	}
	return path
}

// testServer starts the review server for the rule set at path on an httptest server.
func testServer(t testing.TB, path string) (*Server, *httptest.Server) {
	t.Helper()
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	d := &render.ReportData{Title: "test", Generated: fixedNow, Cautions: Cautions, RuleSet: ruleSetInfo(rs)}
	for _, r := range rs.Rules {
		d.Proposals = append(d.Proposals, render.Proposal{Rule: r})
	}
	srv, err := NewServer(path, d, func() time.Time { return fixedNow })
	if err != nil {
		t.Fatal(err)
	}
	hs := httptest.NewServer(srv.Handler())
	t.Cleanup(hs.Close)
	u, _ := url.Parse(hs.URL)
	srv.SetPort(u.Port())
	return srv, hs
}

// noRedirect is a client that returns redirects instead of following them.
var noRedirect = &http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}

// stateOf returns the state token of rule id as the file holds it now.
func stateOf(t testing.TB, path, id string) string {
	t.Helper()
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	r := rs.Rule(id)
	if r == nil {
		t.Fatalf("no rule %s in %s", id, path)
	}
	return RuleState(r)
}

func ruleIDs(t testing.TB, path string) []string {
	t.Helper()
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, r := range rs.Rules {
		ids = append(ids, r.ID)
	}
	return ids
}

func postDecision(t testing.TB, hs *httptest.Server, form url.Values) *http.Response {
	t.Helper()
	resp, err := noRedirect.PostForm(hs.URL+"/decide", form)
	if err != nil {
		t.Fatal(err)
	}
	return resp
}

func decision(srv *Server, id, action, by, note, state string) url.Values {
	return url.Values{"token": {srv.Token()}, "rule": {id}, "action": {action}, "by": {by}, "note": {note}, "state": {state}}
}

var tokenRE = regexp.MustCompile(`name="token" value="([0-9a-f]+)"`)

// snapshot returns the names, sizes and contents of every file under dir.
func snapshot(t testing.TB, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.Walk(dir, func(p string, fi os.FileInfo, err error) error {
		if err != nil {
			return err
		}
		if fi.IsDir() {
			return nil
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		out[rel] = fmt.Sprintf("%d:%x", len(b), b)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func contains(s, sub string) bool { return strings.Contains(s, sub) }
