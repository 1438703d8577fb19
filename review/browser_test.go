package review

// Browser tests: the review page and the static report in a real Chromium, driven over
// the DevTools protocol by chromedp. Without a Chromium they skip with one line, unless
// CROSSFORM_REQUIRE_BROWSER=1 (set in CI), which turns the skip into a failure.
// CROSSFORM_CHROMIUM names another browser binary; CROSSFORM_SCREENSHOTS a folder to copy
// the screenshots to.

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"github.com/crossform/crossform/render"
	"github.com/crossform/crossform/rules"
)

// chromium returns the browser binary, or skips (fails under CROSSFORM_REQUIRE_BROWSER=1).
func chromium(t *testing.T) string {
	t.Helper()
	cands := []string{"/usr/bin/chromium", "chromium", "chromium-browser"}
	if c := os.Getenv("CROSSFORM_CHROMIUM"); c != "" {
		cands = []string{c} // only the browser named
	}
	for _, c := range cands {
		if p, err := exec.LookPath(c); err == nil {
			return p
		}
	}
	if os.Getenv("CROSSFORM_REQUIRE_BROWSER") == "1" {
		t.Fatal("no Chromium found (/usr/bin/chromium) and CROSSFORM_REQUIRE_BROWSER=1: install it with apt-get install -y chromium")
	}
	t.Skip("no Chromium at /usr/bin/chromium: browser test skipped (set CROSSFORM_REQUIRE_BROWSER=1 to make this a failure)")
	return ""
}

// browser starts a headless Chromium with no network features, a fresh profile and a
// 1280 × 900 window, and collects console errors, uncaught exceptions and browser log
// errors (Content-Security-Policy violations are reported there).
func browser(t *testing.T, ctx context.Context) (context.Context, func() []string) {
	t.Helper()
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(chromium(t)),
		chromedp.Headless, chromedp.NoSandbox, chromedp.DisableGPU, chromedp.NoFirstRun, chromedp.NoDefaultBrowserCheck,
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.Flag("disable-dev-shm-usage", true),
		chromedp.UserDataDir(t.TempDir()),
		chromedp.WindowSize(1280, 900),
	}
	actx, cancelA := chromedp.NewExecAllocator(ctx, opts...)
	bctx, cancelB := chromedp.NewContext(actx)
	t.Cleanup(func() { cancelB(); cancelA() })
	if err := chromedp.Do(bctx); err != nil {
		t.Fatalf("starting Chromium: %v", err)
	}
	var mu sync.Mutex
	var problems []string
	msgs := chromedp.Console(bctx)
	go func() {
		for m, err := range msgs {
			if err != nil {
				return
			}
			if m.Type == chromedp.ConsoleError || m.IsException() {
				mu.Lock()
				problems = append(problems, m.String())
				mu.Unlock()
			}
		}
	}()
	return bctx, func() []string {
		mu.Lock()
		defer mu.Unlock()
		return append([]string(nil), problems...)
	}
}

func shot(t *testing.T, ctx context.Context, dir, name string) {
	t.Helper()
	png, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatalf("screenshot %s: %v", name, err)
	}
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, png, 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("screenshot: %s", p)
	if keep := os.Getenv("CROSSFORM_SCREENSHOTS"); keep != "" { // a folder that outlives the test
		if err := os.WriteFile(filepath.Join(keep, name), png, 0o644); err != nil {
			t.Error(err)
		}
	}
}

// proposedIDs returns the ids of the first n proposed rules of the rule set at path.
func proposedIDs(t *testing.T, path string, n int) []string {
	t.Helper()
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, r := range rs.Rules {
		if r.Status == rules.StatusProposed && len(ids) < n {
			ids = append(ids, r.ID)
		}
	}
	if len(ids) < n {
		t.Fatalf("%d proposed rules, want %d", len(ids), n)
	}
	return ids
}

// do runs steps in the tab of ctx, failing the test on error.
func do(t *testing.T, ctx context.Context, what string, steps ...chromedp.Action[chromedp.Void]) {
	t.Helper()
	if err := chromedp.Do(ctx, steps...); err != nil {
		t.Fatalf("%s: %v", what, err)
	}
}

func run[T any](t *testing.T, ctx context.Context, what string, a chromedp.Action[T]) T {
	t.Helper()
	v, err := chromedp.Run(ctx, a)
	if err != nil {
		t.Fatalf("%s: %v", what, err)
	}
	return v
}

func css(s string) chromedp.CSS { return chromedp.CSS(s) }

// flashText waits for the page after a form submission to show its message and returns
// the message. It polls with script rather than with a DOM query, which a navigation in
// flight can invalidate.
func flashText(t *testing.T, ctx context.Context, want string) string {
	t.Helper()
	deadline := time.Now().Add(15 * time.Second)
	last := ""
	for time.Now().Before(deadline) {
		v, err := chromedp.Run(ctx, chromedp.Evaluate[string](`(function(){var f=document.getElementById("flash");return f&&document.readyState==="complete"?f.textContent:""})()`))
		if err == nil {
			last = v
			if strings.Contains(v, want) {
				return v
			}
		}
		time.Sleep(50 * time.Millisecond)
	}
	t.Fatalf("message after the decision %q, want one containing %q", last, want)
	return ""
}

// TestBrowserReview opens the review page of the demo study, accepts one proposal with the
// mouse and rejects another with the keyboard, each with a note, reloads, and checks the
// page and the YAML file; then checks the narrow layout, visible focus and the console.
func TestBrowserReview(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	bctx, problems := browser(t, ctx)
	st, path := demoFixture(t)
	rs, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	d, err := Build(ctx, Input{Study: st, RuleSet: rs, IncludeProposed: true, Now: fixedNow, ToolVersion: "test", MaxPoints: 200, Signals: true}) // fewer points: a smaller DOM for the protocol to track
	if err != nil {
		t.Fatal(err)
	}
	srv, err := NewServer(path, d, nil)
	if err != nil {
		t.Fatal(err)
	}
	ln, err := Listen("127.0.0.1", 0)
	if err != nil {
		t.Fatal(err)
	}
	sctx, stop := context.WithCancel(ctx)
	done := make(chan error, 1)
	go func() { done <- srv.Serve(sctx, ln) }()
	defer func() {
		stop()
		if err := <-done; err != nil {
			t.Errorf("Serve: %v", err)
		}
	}()
	url := URL(ln)
	shots := t.TempDir()
	ids := proposedIDs(t, path, 2)
	acc, rej := "#"+render.Anchor(ids[0]), "#"+render.Anchor(ids[1])

	// Accept with the mouse.
	do(t, bctx, "open the review page and fill the first form",
		chromedp.Navigate(url),
		chromedp.WaitVisible(css("#proposals")),
		chromedp.ScrollIntoView(css(acc)),
		chromedp.SendKeys(css(acc+` input[name="by"]`), "Ann Reviewer"),
		chromedp.SendKeys(css(acc+` textarea[name="note"]`), "consistent with the protocol"),
	)
	shot(t, bctx, shots, "review-card-1280.png")
	do(t, bctx, "accept", chromedp.Click(css(acc+` button[value="accept"]`)))
	flash1 := flashText(t, bctx, ids[0]+" accepted by Ann Reviewer")

	// Reject with the keyboard: the reviewer name is remembered; type the note, Tab to
	// the first button (Accept), Tab to Reject, press Enter.
	do(t, bctx, "type a note and tab to Reject",
		chromedp.ScrollIntoView(css(rej)),
		chromedp.Focus(css(rej+` textarea[name="note"]`)),
		chromedp.KeyEvent("a unit artefact, not a rule"),
		chromedp.KeyEvent("\t"),
		chromedp.KeyEvent("\t"),
	)
	focused := run(t, bctx, "focused element", chromedp.Evaluate[string](`document.activeElement.getAttribute("value") || document.activeElement.tagName`))
	outline := run(t, bctx, "focus style", chromedp.Evaluate[string](`getComputedStyle(document.activeElement).outlineStyle`))
	if focused != "reject" {
		t.Fatalf("after two Tabs from the note the focus is on %q, want the Reject button", focused)
	}
	if outline == "none" || outline == "" {
		t.Errorf("keyboard focus on the Reject button has no visible outline (outline-style %q)", outline)
	}
	shot(t, bctx, shots, "review-keyboard-focus.png")
	do(t, bctx, "press Enter", chromedp.KeyEvent("\r"))
	flash2 := flashText(t, bctx, ids[1]+" rejected by Ann Reviewer")
	if !strings.Contains(flash1, ids[0]+" accepted by Ann Reviewer") || !strings.Contains(flash2, ids[1]+" rejected by Ann Reviewer") {
		t.Errorf("messages %q and %q, want the accept and the reject confirmed", flash1, flash2)
	}

	// Reload: both decisions show.
	do(t, bctx, "reload", chromedp.Navigate(url), chromedp.WaitVisible(css("#proposals")))
	st1 := run(t, bctx, "status", chromedp.AttributeValue(css(acc), "data-status")).Value
	st2 := run(t, bctx, "status", chromedp.AttributeValue(css(rej), "data-status")).Value
	hist1 := run(t, bctx, "history", chromedp.TextContent(css(acc+" details.history")))
	hist2 := run(t, bctx, "history", chromedp.TextContent(css(rej+" details.history")))
	if st1 != "accepted" || st2 != "rejected" {
		t.Errorf("after reload: %s %s, %s %s; want accepted and rejected", ids[0], st1, ids[1], st2)
	}
	if !strings.Contains(hist1, "consistent with the protocol") || !strings.Contains(hist2, "a unit artefact, not a rule") {
		t.Errorf("history on the page lacks the notes: %q / %q", hist1, hist2)
	}
	rs2, err := rules.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		id     string
		status rules.Status
		note   string
	}{{ids[0], rules.StatusAccepted, "consistent with the protocol"}, {ids[1], rules.StatusRejected, "a unit artefact, not a rule"}} {
		r := rs2.Rule(c.id)
		last := r.History[len(r.History)-1]
		if r.Status != c.status || len(r.History) != 2 || last.By != "Ann Reviewer" || last.Note != c.note || last.Action != string(c.status) {
			t.Errorf("YAML: %s is %s with history %+v; want %s by Ann Reviewer with note %q", c.id, r.Status, r.History, c.status, c.note)
		}
	}
	raw, _ := os.ReadFile(path)
	if !bytes.Contains(raw, []byte("by: Ann Reviewer")) {
		t.Error("the YAML file does not name the reviewer")
	}

	// Narrow window: no horizontal scrolling of the page itself.
	do(t, bctx, "narrow window",
		chromedp.EmulateViewport(390, 844),
		chromedp.Navigate(url+acc),
		chromedp.WaitVisible(css(acc)),
	)
	if run(t, bctx, "overflow", chromedp.Evaluate[bool](`document.documentElement.scrollWidth > window.innerWidth + 1`)) {
		t.Error("at 390 px wide the page scrolls sideways")
	}
	shot(t, bctx, shots, "review-narrow-390.png")
	if p := problems(); len(p) > 0 {
		t.Errorf("browser reported %d problems:\n%s", len(p), strings.Join(p, "\n"))
	}
}

// TestBrowserReport opens the static report of the demo study from disk and checks that
// every section renders, every image decodes, the plots are drawn, sorting and filtering
// work, and the console stays clean (no CSP violation, no script error).
func TestBrowserReport(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	bctx, problems := browser(t, ctx)
	_, page := demoReport(t, Input{IncludeProposed: true, Signals: true})
	file := filepath.Join(t.TempDir(), "report.html")
	if err := os.WriteFile(file, page, 0o644); err != nil {
		t.Fatal(err)
	}
	do(t, bctx, "open the report", chromedp.Navigate("file://"+file), chromedp.WaitVisible(css("#discrepancies")))
	sections := run(t, bctx, "sections", chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll("main > section")).filter(s => s.offsetHeight > 0 && s.querySelector("h1,h2")).map(s => s.id)`))
	broken := run(t, bctx, "images", chromedp.Evaluate[int](`Array.from(document.images).filter(i => !i.complete || i.naturalWidth === 0).length`))
	images := run(t, bctx, "images", chromedp.Evaluate[int](`document.images.length`))
	plots := run(t, bctx, "plots", chromedp.Evaluate[int](`document.querySelectorAll("svg.plot").length`))
	cards := run(t, bctx, "cards", chromedp.Evaluate[int](`document.querySelectorAll("article.card").length`))
	siteCards := run(t, bctx, "site cards", chromedp.Evaluate[int](`document.querySelectorAll("#sites article.sitecard").length`))
	sitePlots := run(t, bctx, "site plots", chromedp.Evaluate[int](`Array.from(document.querySelectorAll("#sites svg.plot")).filter(s => s.getBoundingClientRect().width > 0).length`))
	shots := t.TempDir()
	shot(t, bctx, shots, "report-top-1280.png")
	do(t, bctx, "scroll to site 07", chromedp.ScrollIntoView(css("#site-07")))
	shot(t, bctx, shots, "report-site-07.png")
	if siteCards != 2 || sitePlots == 0 {
		t.Errorf("Sites section: %d site cards with %d visible plots, want 2 cards (sites 06 and 07) with plots", siteCards, sitePlots)
	}
	do(t, bctx, "sort and filter",
		chromedp.Click(css(`#vars-0 thead th:nth-child(4) button`)),
		chromedp.SendKeys(css(`input.filter[data-target="vars-0"]`), "VS."),
	)
	sortState := run(t, bctx, "sort state", chromedp.AttributeValue(css(`#vars-0 thead th:nth-child(4)`), "aria-sort")).Value
	countText := run(t, bctx, "filter count", chromedp.Text(css(`[data-count-for="vars-0"]`)))
	want := []string{"overview", "variables", "associations", "proposals", "discrepancies", "sites"}
	if fmt.Sprint(sections) != fmt.Sprint(want) {
		t.Errorf("visible sections %v, want %v", sections, want)
	}
	if images == 0 || broken != 0 {
		t.Errorf("%d of %d images did not decode", broken, images)
	}
	if plots == 0 || cards == 0 {
		t.Errorf("%d plots on %d cards", plots, cards)
	}
	if sortState != "ascending" {
		t.Errorf("after a click the Missing column is sorted %q, want ascending", sortState)
	}
	if !strings.Contains(countText, " of ") {
		t.Errorf("filter count %q, want \"N of M rows\"", countText)
	}
	if p := problems(); len(p) > 0 {
		t.Errorf("browser reported %d problems:\n%s", len(p), strings.Join(p, "\n"))
	}
}
