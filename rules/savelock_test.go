package rules

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// TestSaveRace: two rule sets loaded from the same file save different
// decisions at the same moment, 50 times. Exactly one Save may succeed and
// the other must fail with ErrConflict; without the save lock both could
// pass the hash check and the second rename would drop the first decision.
func TestSaveRace(t *testing.T) {
	src := "schema: 1\nrules:\n  - {id: a, kind: expr, level: table, params: {require: 'A > 0'}}\n  - {id: b, kind: expr, level: table, params: {require: 'B > 0'}}\n"
	for i := range 50 {
		path := filepath.Join(t.TempDir(), "r.yaml")
		if err := os.WriteFile(path, []byte(src), 0o644); err != nil {
			t.Fatal(err)
		}
		var sets [2]*RuleSet
		for k, id := range []string{"a", "b"} {
			rs, err := Load(path)
			if err != nil {
				t.Fatal(err)
			}
			if err := Decide(rs, []string{id}, ActionAccept, "rev-"+id, "", time.Unix(0, 0)); err != nil {
				t.Fatal(err)
			}
			sets[k] = rs
		}
		var errs [2]error
		var wg sync.WaitGroup
		for k := range sets {
			wg.Go(func() { errs[k] = sets[k].Save() })
		}
		wg.Wait()
		ok := 0
		for k, err := range errs {
			switch {
			case err == nil:
				ok++
			case !errors.Is(err, ErrConflict):
				t.Fatalf("round %d: Save %d = %v, want nil or ErrConflict", i, k, err)
			}
		}
		if ok != 1 {
			t.Fatalf("round %d: %d saves succeeded, want exactly 1 (errors %v)", i, ok, errs)
		}
		rs, err := Load(path)
		if err != nil {
			t.Fatal(err)
		}
		accepted := len(rs.Accepted())
		if accepted != 1 {
			t.Fatalf("round %d: %d rules accepted in the file, want the one decision that was saved", i, accepted)
		}
		if ents, _ := os.ReadDir(filepath.Dir(path)); len(ents) != 1 {
			t.Fatalf("round %d: folder holds %d entries, want only the rule set (lock file removed)", i, len(ents))
		}
	}
}

// TestParseDuplicateKeys: a key given twice in the rule set or in a rule is an
// error naming both lines; yaml.v3 would keep the last silently.
func TestParseDuplicateKeys(t *testing.T) {
	cases := []struct{ name, src, want string }{
		{"rule key", "schema: 1\nrules:\n  - id: r\n    status: rejected\n    status: accepted\n",
			`d.yaml:5:5: key "status" given twice (first at line 4)`},
		{"top key", "schema: 1\nrules: []\nrules: []\n", `d.yaml:3:1: key "rules" given twice (first at line 2)`},
		{"params key", "schema: 1\nrules:\n  - id: r\n    params: {when: 'A > 1', when: 'A > 2'}\n",
			`d.yaml:4:13: params: line 4: mapping key "when" already defined at line 4`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse("d.yaml", []byte(c.src))
			if err == nil || err.Error() != c.want || strings.Contains(err.Error(), "\n") {
				t.Errorf("Parse error = %v, want %s", err, c.want)
			}
		})
	}
}
