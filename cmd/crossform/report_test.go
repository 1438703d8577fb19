package main

import (
	"bytes"
	"context"
	"io"
	"log/slog"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/crossform/crossform/dataset/demostudy"
	"github.com/crossform/crossform/rules"
)

func TestReportFlags(t *testing.T) {
	var got *reportOptions
	cmd := newReportCmd(&globalOptions{}, func(o *reportOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"study/", "--rules", "r.yaml", "--out", "rep.html", "--previous", "l.csv", "--accepted-only", "--level", "visit,subject", "--title", "T"})
	cmd.SetOut(io.Discard)
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.path != "study/" || got.in.rules != "r.yaml" || got.out != "rep.html" || got.in.previous != "l.csv" || !got.in.acceptedOnly || got.data.level != "visit,subject" || got.title != "T" || got.in.noSignals {
		t.Errorf("options %+v", got)
	}
	cmd = newReportCmd(&globalOptions{}, func(o *reportOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"study/", "--rules", "r.yaml", "--no-signals"})
	if err := cmd.Execute(); err != nil || !got.in.noSignals {
		t.Errorf("--no-signals: err %v, noSignals %v; want it set", err, got.in.noSignals)
	}
	cmd = newReportCmd(&globalOptions{}, func(o *reportOptions) error { return nil })
	cmd.SetArgs([]string{"study/"})
	if err := cmd.Execute(); err == nil || !strings.Contains(err.Error(), "--rules") {
		t.Errorf("without --rules: %v, want a usage error naming --rules", err)
	}
}

func TestReviewFlags(t *testing.T) {
	var got *reviewOptions
	cmd := newReviewCmd(&globalOptions{}, func(o *reviewOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"study/", "--rules", "r.yaml", "--port", "8765", "--addr", "localhost", "--no-signals"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.in.rules != "r.yaml" || got.port != 8765 || got.addr != "localhost" || !got.in.noSignals {
		t.Errorf("options %+v", got)
	}
}

// demoStudyAndRules writes the demo study and a small accepted-and-proposed rule set.
func demoStudyAndRules(t *testing.T) (study, rulesPath string) {
	t.Helper()
	dir := t.TempDir()
	study = filepath.Join(dir, "extract-1")
	st, err := demostudy.Generate(demostudy.DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	if err := st.WriteCSV(study); err != nil {
		t.Fatal(err)
	}
	rulesPath = filepath.Join(dir, "rules.yaml")
	rs := rules.New(rulesPath)
	at := time.Date(2026, 1, 2, 0, 0, 0, 0, time.UTC)
	rules.Merge(rs, []*rules.Rule{
		{Kind: rules.KindOrder, Level: "visit", Vars: []string{"DM.RFICDTC", "SV.STDTC"}, Params: map[string]any{"tolerance": 0},
			Statement: "Consent is on or before each visit.", Query: "Consent {DM.RFICDTC} is after the visit {SV.STDTC}.", Severity: rules.Critical,
			History: []rules.Event{{At: at, By: "crossform", Action: "proposed"}}},
		{Kind: rules.KindOrder, Level: "visit", Vars: []string{"VS.DIABP", "VS.SYSBP"}, Params: map[string]any{"tolerance": 0},
			Statement: "Diastolic is at most systolic.", Query: "Check {VS.DIABP} and {VS.SYSBP}.", Severity: rules.Major,
			History: []rules.Event{{At: at, By: "crossform", Action: "proposed"}}},
	}, "sha256:test")
	if err := rules.Decide(rs, []string{rs.Rules[0].ID}, rules.ActionAccept, "Lead", "", at); err != nil {
		t.Fatal(err)
	}
	if err := rs.Save(); err != nil {
		t.Fatal(err)
	}
	return study, rulesPath
}

func TestReportEndToEnd(t *testing.T) {
	study, rulesPath := demoStudyAndRules(t)
	out := filepath.Join(t.TempDir(), "report.html")
	stdout, stderr, code := runCLI(t, "report", study, "--rules", rulesPath, "--out", out, "--quiet")
	if code != exitOK || stdout != "" || stderr != "" {
		t.Fatalf("exit %d, stdout %q, stderr %q; want 0 and silence", code, stdout, stderr)
	}
	b, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	if len(b) >= 5<<20 || !bytes.HasPrefix(b, []byte("<!DOCTYPE html>")) || !bytes.Contains(b, []byte("Consent is on or before each visit.")) {
		t.Errorf("report of %d bytes does not look right", len(b))
	}
	for _, want := range []string{`id="sites-table"`, `id="site-06"`, `id="site-07"`} {
		if !bytes.Contains(b, []byte(want)) {
			t.Errorf("report lacks %s: the Sites section is on by default", want)
		}
	}
	_, stderr, code = runCLI(t, "report", study, "--rules", filepath.Join(t.TempDir(), "missing.yaml"))
	if code != exitError || !strings.Contains(stderr, "missing.yaml") {
		t.Errorf("missing rule set: exit %d, stderr %q; want 2 naming the file", code, stderr)
	}
}

func TestReviewServes(t *testing.T) {
	study, rulesPath := demoStudyAndRules(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var stdout bytes.Buffer
	o := &reviewOptions{g: &globalOptions{quiet: true, stderr: io.Discard, log: slog.New(slog.NewTextHandler(io.Discard, nil))},
		path: study, addr: "127.0.0.1", ctx: ctx, stdout: &stdout}
	o.in.rules = rulesPath
	urls := make(chan string, 1)
	o.ready = func(u string) { urls <- u }
	done := make(chan error, 1)
	go func() { done <- reviewRun(o) }()
	var u string
	select {
	case u = <-urls:
	case err := <-done:
		t.Fatalf("review stopped: %v", err)
	case <-time.After(30 * time.Second):
		t.Fatal("review did not start")
	}
	if !strings.HasPrefix(stdout.String(), "http://127.0.0.1:") || strings.TrimSpace(stdout.String()) != u {
		t.Errorf("stdout %q, want the URL %q", stdout.String(), u)
	}
	resp, err := http.Get(u)
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK || !bytes.Contains(body, []byte(`<form class="decide"`)) {
		t.Errorf("GET %s = %d without decision forms", u, resp.StatusCode)
	}
	cancel()
	if err := <-done; err != nil {
		t.Errorf("review after cancel: %v", err)
	}
	o2 := &reviewOptions{g: o.g, path: study, addr: "0.0.0.0", ctx: context.Background(), stdout: io.Discard}
	o2.in.rules = rulesPath
	if err := reviewRun(o2); err == nil || !strings.Contains(err.Error(), "loopback") {
		t.Errorf("--addr 0.0.0.0: %v, want a refusal", err)
	}
}
