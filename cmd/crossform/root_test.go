package main

import (
	"bytes"
	"context"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite golden files")

// runCLI runs the command line and returns stdout, stderr and the exit code.
func runCLI(t *testing.T, args ...string) (string, string, int) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(context.Background(), args, strings.NewReader(""), &out, &errb)
	return out.String(), errb.String(), code
}

func golden(t *testing.T, name, got string) {
	t.Helper()
	path := filepath.Join("testdata", name+".golden")
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./cmd/crossform -update)", err)
	}
	if got != string(want) {
		t.Errorf("output differs from %s:\n got:\n%s\nwant:\n%s", path, got, want)
	}
}

func TestProfileGolden(t *testing.T) {
	for _, tc := range []struct {
		name string
		args []string
	}{
		{"profile_text", []string{"profile", "testdata/vitals.csv", "--keys", "SUBJ,VISIT", "--site", "CENTRE"}},
		{"profile_json", []string{"profile", "testdata/vitals.csv", "--keys", "SUBJ,VISIT", "--json"}},
		{"profile_csv", []string{"profile", "testdata/vitals.csv", "--csv"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out, errs, code := runCLI(t, tc.args...)
			if code != exitOK {
				t.Fatalf("exit %d, stderr %q", code, errs)
			}
			golden(t, tc.name, out)
		})
	}
}

func TestExitCodes(t *testing.T) {
	for _, tc := range []struct {
		name     string
		args     []string
		code     int
		errSub   string
		usageSub string
	}{
		{"no args to profile", []string{"profile"}, exitError, "accepts 1 arg(s), received 0", "usage: crossform profile PATH"},
		{"unknown flag", []string{"profile", "--nope", "x"}, exitError, "unknown flag: --nope", "usage:"},
		{"unknown command", []string{"frobnicate"}, exitError, "unknown command", "usage:"},
		{"missing file", []string{"profile", "testdata/absent.csv"}, exitError, "no such file", ""},
		{"unknown key", []string{"profile", "testdata/vitals.csv", "--keys", "NOPE"}, exitError, `key column "NOPE"`, ""},
		{"bad delimiter", []string{"profile", "testdata/vitals.csv", "--delimiter", "pipe"}, exitError, `--delimiter "pipe"`, "usage:"},
		{"version", []string{"--version"}, exitOK, "", ""},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, errs, code := runCLI(t, tc.args...)
			if code != tc.code {
				t.Fatalf("exit %d, want %d; stderr %q", code, tc.code, errs)
			}
			if !strings.Contains(errs, tc.errSub) {
				t.Errorf("stderr %q, want it to contain %q", errs, tc.errSub)
			}
			if tc.usageSub != "" && !strings.Contains(errs, tc.usageSub) {
				t.Errorf("stderr %q, want a usage line %q", errs, tc.usageSub)
			}
			if tc.code == exitError && strings.Count(errs, "crossform: ") != 1 {
				t.Errorf("stderr %q: want the error printed exactly once", errs)
			}
		})
	}
}

func TestVarsFileUnknownVariable(t *testing.T) {
	dir := t.TempDir()
	vars := filepath.Join(dir, "vars.yaml")
	os.WriteFile(vars, []byte("variables:\n  WEIGHT:\n    type: continuous\n"), 0o644)
	_, errs, code := runCLI(t, "profile", "testdata/vitals.csv", "--vars", vars)
	if code != exitError || !strings.Contains(errs, `"WEIGHT"`) || !strings.Contains(errs, "unknown variable") {
		t.Fatalf("exit %d, stderr %q: want an error naming WEIGHT", code, errs)
	}
}

func TestHelpOnEveryCommand(t *testing.T) {
	root := newRootCmd(&globalOptions{})
	for _, c := range root.Commands() {
		if c.Name() == "help" || c.Name() == "completion" {
			continue
		}
		if c.Short == "" || c.Example == "" {
			t.Errorf("command %q: want a one-line purpose and an example", c.Name())
		}
	}
}
