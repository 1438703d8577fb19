package check

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/crossform/crossform/dataset"
)

func TestHashFile(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "abc.txt")
	if err := os.WriteFile(p, []byte("abc"), 0o644); err != nil {
		t.Fatal(err)
	}
	h, err := HashFile(p)
	// FIPS 180-2, Appendix B.1: SHA-256("abc").
	const want = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
	if err != nil || h.SHA256 != want || h.Bytes != 3 {
		t.Errorf("HashFile = %+v, %v; want %s, 3 bytes (FIPS 180-2 B.1)", h, err, want)
	}
}

func TestManifestWriteFile(t *testing.T) {
	rs := ruleSet(t, twoRules)
	res := runTables(t, rs, nil, Options{ToolVersion: "v1.2.3", Parameters: map[string]string{"fail-on": "major"},
		Now: func() time.Time { return time.Date(2026, 3, 4, 5, 6, 7, 0, time.FixedZone("X", 3600)) }})
	m := res.Manifest
	dir := t.TempDir()
	prev := filepath.Join(dir, "prev.csv")
	os.WriteFile(prev, []byte("x"), 0o644)
	if err := m.SetClasses(ClassCounts{New: 2, Resolved: 1}, prev); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "manifest.json")
	if err := m.WriteFile(path); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var back Manifest
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if back.ToolVersion != "v1.2.3" || back.Created.Format(time.RFC3339) != "2026-03-04T04:06:07Z" ||
		back.Parameters["fail-on"] != "major" || back.Parameters["include_proposed"] != "false" ||
		back.RuleSet.SHA256 != rs.Hash() || back.Counts.Rules != 3 || back.Counts.RulesNotEvaluable != 3 ||
		back.Counts.Classes == nil || back.Counts.Classes.New != 2 || len(back.Inputs) != 1 || back.Inputs[0].Path != prev {
		t.Errorf("manifest read back = %s", b)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 2 {
		t.Errorf("folder holds %d files after the atomic write, want 2 (no temporary left)", len(ents))
	}
	if err := m.WriteFile(filepath.Join(dir, "missing", "m.json")); err == nil {
		t.Error("WriteFile into a missing folder succeeded")
	}
}

// TestResultJSON: undefined rates and p-values encode as null, so a Result
// can be written with encoding/json.
func TestResultJSON(t *testing.T) {
	rs := ruleSet(t, twoRules)
	res := runTables(t, rs, map[string]*dataset.Table{"visit": visitTable(t, false)}, Options{})
	b, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	for _, want := range []string{`"rule_id":"range-ht"`, `"rate":null`, `"others_rate":null`, `"p":null`, `"tested":false`} {
		if !strings.Contains(s, want) {
			t.Errorf("JSON lacks %s: %s", want, s)
		}
	}
}
