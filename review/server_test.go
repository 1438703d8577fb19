package review

import (
	"bytes"
	"io"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/crossform/crossform/rules"
)

func readBody(t testing.TB, resp *http.Response) string {
	t.Helper()
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestPageHeadersAndToken(t *testing.T) {
	path := smallRuleSet(t)
	srv, hs := testServer(t, path)
	resp, err := http.Get(hs.URL + "/")
	if err != nil {
		t.Fatal(err)
	}
	body := readBody(t, resp)
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("GET / = %d, want 200", resp.StatusCode)
	}
	for k, want := range map[string]string{
		"X-Content-Type-Options": "nosniff",
		"Cache-Control":          "no-store",
		"X-Frame-Options":        "DENY",
	} {
		if got := resp.Header.Get(k); got != want {
			t.Errorf("%s = %q, want %q", k, got, want)
		}
	}
	csp := resp.Header.Get("Content-Security-Policy")
	for _, want := range []string{"default-src 'none'", "script-src 'sha256-", "style-src 'sha256-", "frame-ancestors 'none'", "form-action 'self'"} {
		if !strings.Contains(csp, want) {
			t.Errorf("CSP %q lacks %q", csp, want)
		}
	}
	m := tokenRE.FindAllStringSubmatch(body, -1)
	if len(m) != 3 {
		t.Fatalf("%d forms with a token, want 3 (one per rule)", len(m))
	}
	if m[0][1] != srv.Token() || len(srv.Token()) != 64 {
		t.Errorf("form token %q, want the server's 64-hex-digit token", m[0][1])
	}
}

// TestDecideAndReload: a decision lands in the file with its history and shows on the
// next page.
func TestDecideAndReload(t *testing.T) {
	path := smallRuleSet(t)
	srv, hs := testServer(t, path)
	id := ruleIDs(t, path)[0]
	resp := postDecision(t, hs, decision(srv, id, rules.ActionAccept, "R. Viewer", "plausible: consent precedes visits", stateOf(t, path, id)))
	readBody(t, resp)
	if resp.StatusCode != http.StatusSeeOther {
		t.Fatalf("POST /decide = %d, want 303", resp.StatusCode)
	}
	loc := resp.Header.Get("Location")
	if !strings.HasPrefix(loc, "/?flash=") || !strings.HasSuffix(loc, "#rule-"+id) {
		t.Errorf("Location = %q, want /?flash=…#rule-%s", loc, id)
	}
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	r := rs.Rule(id)
	if r.Status != rules.StatusAccepted || len(r.History) != 2 || r.History[1].By != "R. Viewer" || r.History[1].Note != "plausible: consent precedes visits" || !r.History[1].At.Equal(fixedNow) {
		t.Fatalf("rule after decision: status %s, history %+v", r.Status, r.History)
	}
	req, _ := http.NewRequest(http.MethodGet, hs.URL+loc, nil)
	for _, c := range resp.Cookies() {
		req.AddCookie(c)
	}
	page, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	body := readBody(t, page)
	for _, want := range []string{"Rule " + id + " accepted by R. Viewer", `value="R. Viewer"`, "plausible: consent precedes visits", `data-status="accepted"`} {
		if !strings.Contains(body, want) {
			t.Errorf("page after the decision lacks %q", want)
		}
	}
}

// TestConcurrentDifferentRules: two reviewers deciding on different rules at the same
// moment both land.
func TestConcurrentDifferentRules(t *testing.T) {
	path := smallRuleSet(t)
	srv, hs := testServer(t, path)
	ids := ruleIDs(t, path)
	forms := []url.Values{
		decision(srv, ids[0], rules.ActionAccept, "Ann", "ok", stateOf(t, path, ids[0])),
		decision(srv, ids[1], rules.ActionReject, "Ben", "unit artefact", stateOf(t, path, ids[1])),
	}
	codes := make([]int, 2)
	var start, done sync.WaitGroup
	start.Add(1)
	for i := range forms {
		done.Add(1)
		go func() {
			defer done.Done()
			start.Wait()
			resp, err := noRedirect.PostForm(hs.URL+"/decide", forms[i])
			if err != nil {
				t.Error(err)
				return
			}
			io.Copy(io.Discard, resp.Body)
			resp.Body.Close()
			codes[i] = resp.StatusCode
		}()
	}
	start.Done()
	done.Wait()
	for i, c := range codes {
		if c != http.StatusSeeOther {
			t.Errorf("decision %d: status %d, want 303", i, c)
		}
	}
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if a, b := rs.Rule(ids[0]), rs.Rule(ids[1]); a.Status != rules.StatusAccepted || b.Status != rules.StatusRejected || len(a.History) != 2 || len(b.History) != 2 {
		t.Errorf("after two concurrent decisions: %s %s (%d events), %s %s (%d events); want accepted and rejected with 2 events each",
			a.ID, a.Status, len(a.History), b.ID, b.Status, len(b.History))
	}
}

// TestConcurrentSameRule: two decisions on the same rule from pages showing the same
// state: one lands, the other gets a clear conflict and changes nothing.
func TestConcurrentSameRule(t *testing.T) {
	path := smallRuleSet(t)
	srv, hs := testServer(t, path)
	id := ruleIDs(t, path)[1]
	st := stateOf(t, path, id)
	forms := []url.Values{
		decision(srv, id, rules.ActionAccept, "Ann", "keep", st),
		decision(srv, id, rules.ActionReject, "Ben", "drop", st),
	}
	codes := make([]int, 2)
	bodies := make([]string, 2)
	var start, done sync.WaitGroup
	start.Add(1)
	for i := range forms {
		done.Add(1)
		go func() {
			defer done.Done()
			start.Wait()
			resp, err := noRedirect.PostForm(hs.URL+"/decide", forms[i])
			if err != nil {
				t.Error(err)
				return
			}
			b, _ := io.ReadAll(resp.Body)
			resp.Body.Close()
			codes[i], bodies[i] = resp.StatusCode, string(b)
		}()
	}
	start.Done()
	done.Wait()
	won, lost := -1, -1
	for i, c := range codes {
		switch c {
		case http.StatusSeeOther:
			won = i
		case http.StatusConflict:
			lost = i
		}
	}
	if won < 0 || lost < 0 {
		t.Fatalf("statuses %v, want one 303 and one 409", codes)
	}
	if !strings.Contains(bodies[lost], "Conflict: rule "+id+" changed since this page was shown") || !strings.Contains(bodies[lost], "NOT saved") {
		t.Errorf("conflict page does not say so clearly:\n%.400s", bodies[lost])
	}
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	r := rs.Rule(id)
	if len(r.History) != 2 || r.History[1].By != forms[won].Get("by") {
		t.Errorf("history %+v, want exactly the winner's (%s) decision appended", r.History, forms[won].Get("by"))
	}
}

// TestExternalChangeSameRule: a change made to the file by another program after the page
// was rendered is never overwritten; a change to another rule does not block a decision.
func TestExternalChange(t *testing.T) {
	path := smallRuleSet(t)
	srv, hs := testServer(t, path)
	ids := ruleIDs(t, path)
	st0, st1 := stateOf(t, path, ids[0]), stateOf(t, path, ids[1])
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := rules.Decide(rs, []string{ids[0]}, rules.ActionReject, "Other tool", "", fixedNow); err != nil {
		t.Fatal(err)
	}
	if err := rs.Save(); err != nil {
		t.Fatal(err)
	}
	resp := postDecision(t, hs, decision(srv, ids[0], rules.ActionAccept, "Ann", "", st0))
	if body := readBody(t, resp); resp.StatusCode != http.StatusConflict || !strings.Contains(body, "Other tool") {
		t.Errorf("decision on an externally changed rule: %d, want 409 naming the other change", resp.StatusCode)
	}
	resp = postDecision(t, hs, decision(srv, ids[1], rules.ActionAccept, "Ann", "", st1))
	readBody(t, resp)
	if resp.StatusCode != http.StatusSeeOther {
		t.Errorf("decision on another rule: %d, want 303", resp.StatusCode)
	}
	if got := stateOf(t, path, ids[0]); got == st0 {
		t.Error("external change lost")
	}
}

func TestSecurity(t *testing.T) {
	path := smallRuleSet(t)
	dir := filepath.Dir(path)
	srv, hs := testServer(t, path)
	id := ruleIDs(t, path)[0]
	st := stateOf(t, path, id)
	before := snapshot(t, dir)
	cwd, _ := os.Getwd()
	cwdBefore := snapshot(t, cwd)

	post := func(form url.Values, mod func(*http.Request)) (int, string) {
		req, _ := http.NewRequest(http.MethodPost, hs.URL+"/decide", strings.NewReader(form.Encode()))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		if mod != nil {
			mod(req)
		}
		resp, err := noRedirect.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		return resp.StatusCode, readBody(t, resp)
	}
	good := decision(srv, id, rules.ActionAccept, "Ann", "", st)
	without := func(k string) url.Values {
		f := url.Values{}
		for kk, v := range good {
			if kk != k {
				f[kk] = v
			}
		}
		return f
	}
	with := func(k, v string) url.Values {
		f := without(k)
		f.Set(k, v)
		return f
	}
	cases := []struct {
		name string
		form url.Values
		mod  func(*http.Request)
		want int
	}{
		{"no token", without("token"), nil, http.StatusForbidden},
		{"wrong token", with("token", strings.Repeat("0", 64)), nil, http.StatusForbidden},
		{"token prefix", with("token", srv.Token()[:32]), nil, http.StatusForbidden},
		{"oversized body", with("note", strings.Repeat("x", MaxBody+1)), nil, http.StatusRequestEntityTooLarge},
		{"foreign host", good, func(r *http.Request) { r.Host = "evil.example:80" }, http.StatusForbidden},
		{"rebinding host", good, func(r *http.Request) { r.Host = "127.0.0.1.evil.example" }, http.StatusForbidden},
		{"loopback name on another port", good, func(r *http.Request) { r.Host = "localhost:1" }, http.StatusForbidden},
		{"cross-origin", good, func(r *http.Request) { r.Header.Set("Origin", "https://evil.example") }, http.StatusForbidden},
		{"cross-site fetch", good, func(r *http.Request) { r.Header.Set("Sec-Fetch-Site", "cross-site") }, http.StatusForbidden},
		{"path as rule id", with("rule", "../../../../tmp/crossform-pwned.yaml"), nil, http.StatusNotFound},
		{"absolute path as rule id", with("rule", filepath.Join(dir, "other.yaml")), nil, http.StatusNotFound},
		{"path-like extra fields", func() url.Values {
			f := with("rule", "x")
			f.Set("path", "/tmp/x.yaml")
			f.Set("file", "../x")
			return f
		}(), nil, http.StatusNotFound},
		{"unknown action", with("action", "delete"), nil, http.StatusBadRequest},
		{"no reviewer", with("by", "  "), nil, http.StatusBadRequest},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if code, body := post(c.form, c.mod); code != c.want {
				t.Errorf("status %d, want %d (%.200s)", code, c.want, body)
			}
		})
	}
	for _, p := range []string{"/../rules.yaml", "/rules.yaml", "/..%2f..%2fetc%2fpasswd", "/decide/../../rules.yaml", "/static/../../" + filepath.Base(path)} {
		resp, err := http.Get(hs.URL + p)
		if err != nil {
			t.Fatal(err)
		}
		body := readBody(t, resp)
		if resp.StatusCode == http.StatusOK && strings.Contains(body, "schema: 1") {
			t.Errorf("GET %s served the rule set", p)
		}
	}
	resp, _ := http.Get(hs.URL + "/decide")
	readBody(t, resp)
	if resp.StatusCode != http.StatusMethodNotAllowed {
		t.Errorf("GET /decide = %d, want 405", resp.StatusCode)
	}
	if after := snapshot(t, dir); !equalMaps(before, after) {
		t.Errorf("refused requests changed the rule set's folder: %v → %v", keys(before), keys(after))
	}
	if _, err := os.Stat("/tmp/crossform-pwned.yaml"); err == nil {
		t.Error("a path from a request reached the file system")
	}

	// A good decision writes the rule set and nothing else.
	code, _ := post(good, nil)
	if code != http.StatusSeeOther {
		t.Fatalf("good decision: %d, want 303", code)
	}
	after := snapshot(t, dir)
	if len(after) != len(before) {
		t.Errorf("files after a decision %v, want only %v", keys(after), keys(before))
	}
	for k := range before {
		if k != filepath.Base(path) && after[k] != before[k] {
			t.Errorf("%s changed", k)
		}
	}
	if after[filepath.Base(path)] == before[filepath.Base(path)] {
		t.Error("the rule set was not written")
	}
	if cwdAfter := snapshot(t, cwd); !equalMaps(cwdBefore, cwdAfter) {
		t.Error("the server wrote into the working folder")
	}
}

func equalMaps(a, b map[string]string) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

func keys(m map[string]string) []string {
	var out []string
	for k := range m {
		out = append(out, k)
	}
	return out
}

func TestListenLoopbackOnly(t *testing.T) {
	for _, c := range []struct {
		host string
		ok   bool
	}{{"127.0.0.1", true}, {"localhost", true}, {"", true}, {"0.0.0.0", false}, {"192.168.1.10", false}, {"example.com", false}} {
		ln, err := Listen(c.host, 0)
		if (err == nil) != c.ok {
			t.Errorf("Listen(%q) error %v, want ok=%v", c.host, err, c.ok)
		}
		if ln != nil {
			if u := URL(ln); !strings.HasPrefix(u, "http://127.0.0.1:") {
				t.Errorf("URL = %q, want http://127.0.0.1:PORT/", u)
			}
			ln.Close()
		}
	}
}

func TestRuleState(t *testing.T) {
	r := &rules.Rule{ID: "a", Status: rules.StatusProposed, History: []rules.Event{{At: fixedNow, By: "x", Action: "proposed"}}}
	s0 := RuleState(r)
	r2 := *r
	r2.History = append(append([]rules.Event(nil), r.History...), rules.Event{At: fixedNow, By: "y", Action: "accepted"})
	r2.Status = rules.StatusAccepted
	r3 := *r
	r3.History = []rules.Event{{At: fixedNow, By: "x", Action: "proposed", Note: "edited"}}
	if s0 == RuleState(&r2) || s0 == RuleState(&r3) {
		t.Error("RuleState does not change with status, history length or history content")
	}
	if s0 != RuleState(r) {
		t.Error("RuleState is not deterministic")
	}
	if !bytes.Equal([]byte(s0), []byte(RuleState(&rules.Rule{ID: "a", Status: rules.StatusProposed, History: []rules.Event{{At: fixedNow, By: "x", Action: "proposed"}}}))) {
		t.Error("RuleState depends on more than id, status and history")
	}
}
