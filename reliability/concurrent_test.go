package reliability

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/crossform/crossform/rules"
)

// concurrentRounds and the deciders of each round: eight processes at once,
// six on rules of their own and two on one shared rule.
const concurrentRounds = 5

type decider struct {
	rule, by string
}

var deciders = []decider{
	{"r0", "rev0"}, {"r1", "rev1"}, {"r2", "rev2"}, {"r3", "rev3"}, {"r4", "rev4"}, {"r5", "rev5"},
	{"shared", "rev6"}, {"shared", "rev7"},
}

// TestConcurrentDecide starts eight `crossform decide accept` processes at
// once against one rule set, several rounds. Afterwards every process that
// exited 0 has its decision in the file exactly once (reviewer, action, note),
// every process that failed said why on stderr in one line (another
// reviewer's decision on the same rule, or rules.ErrConflict after the CLI's
// retries), each rule of its own was accepted, and the shared rule exactly
// once.
func TestConcurrentDecide(t *testing.T) {
	bin := crossformBin(t)
	var src strings.Builder
	src.WriteString("schema: 1\nrules:\n")
	for _, id := range []string{"r0", "r1", "r2", "r3", "r4", "r5", "shared"} {
		fmt.Fprintf(&src, "  - id: %s\n    kind: expr\n    level: table\n    severity: minor\n    params: {require: 'A > 0'}\n", id)
	}
	failed, conflicts := 0, 0
	for round := range concurrentRounds {
		dir := t.TempDir()
		path := filepath.Join(dir, "rules.yaml")
		if err := os.WriteFile(path, []byte(src.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		type result struct {
			err            error
			stdout, stderr string
		}
		res := make([]result, len(deciders))
		var wg sync.WaitGroup
		for i, d := range deciders {
			wg.Go(func() {
				cmd := exec.Command(bin, "decide", "accept", d.rule, "--rules", path, "--by", d.by, "--note", fmt.Sprintf("round %d", round))
				var out, errb bytes.Buffer
				cmd.Stdout, cmd.Stderr = &out, &errb
				res[i] = result{cmd.Run(), out.String(), errb.String()}
			})
		}
		wg.Wait()
		rs, err := rules.Load(path)
		if err != nil {
			t.Fatalf("round %d: the rule set does not load: %v", round, err)
		}
		count := func(id, by string) int {
			n := 0
			for _, e := range rs.Rule(id).History {
				if e.By == by && e.Action == string(rules.StatusAccepted) && e.Note == fmt.Sprintf("round %d", round) {
					n++
				}
			}
			return n
		}
		for i, d := range deciders {
			r := res[i]
			n := count(d.rule, d.by)
			if r.err == nil {
				if n != 1 {
					t.Errorf("round %d: %s's decision on %s exited 0 (%q) but is in the history %d times", round, d.by, d.rule, r.stdout, n)
				}
				continue
			}
			failed++
			var ee *exec.ExitError
			if !errors.As(r.err, &ee) || ee.ExitCode() != 2 {
				t.Errorf("round %d: %s: %v, want exit status 2", round, d.by, r.err)
			}
			msg := strings.TrimSuffix(r.stderr, "\n")
			switch {
			case strings.Contains(msg, "\n") || !strings.HasPrefix(msg, "crossform: "):
				t.Errorf("round %d: %s failed without a one-line message: %q", round, d.by, r.stderr)
			case msg == "crossform: rule "+d.rule+" is accepted: cannot accept it":
				// the other reviewer of the shared rule was first
			case strings.Contains(msg, rules.ErrConflict.Error()):
				conflicts++
			default:
				t.Errorf("round %d: %s failed with %q, want a conflict message", round, d.by, msg)
			}
			if n != 0 {
				t.Errorf("round %d: %s's failed decision on %s is in the history %d times", round, d.by, d.rule, n)
			}
		}
		for _, r := range rs.Rules {
			if r.Status != rules.StatusAccepted || len(r.History) != 1 {
				t.Errorf("round %d: rule %s is %s with %d decisions, want accepted once", round, r.ID, r.Status, len(r.History))
			}
		}
	}
	t.Logf("%d rounds of %d processes: %d refused (%d after conflict retries)", concurrentRounds, len(deciders), failed, conflicts)
	if failed > concurrentRounds*2 {
		t.Errorf("%d of %d decisions refused, want only the shared rule's second reviewer", failed, concurrentRounds*len(deciders))
	}
}
