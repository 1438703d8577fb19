package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// walkMaxLines is the most output lines the walk-through shows per command.
const walkMaxLines = 14

// splitArgs splits a command line on spaces, honouring double quotes.
func splitArgs(s string) []string {
	var out []string
	var cur strings.Builder
	inQ, have := false, false
	for _, r := range s {
		switch {
		case r == '"':
			inQ, have = !inQ, true
		case r == ' ' && !inQ:
			if have {
				out = append(out, cur.String())
				cur.Reset()
				have = false
			}
		default:
			cur.WriteRune(r)
			have = true
		}
	}
	if have {
		out = append(out, cur.String())
	}
	return out
}

// TestWalkthrough runs every "$ crossform ..." command of
// docs/walkthrough.md, in order, in a fresh folder, and checks that each
// exits as documented ("[exit N]", default 0) and prints the documented
// output (a prefix when the documented output ends with "[…]"). With -update
// it rewrites the documented outputs instead.
func TestWalkthrough(t *testing.T) {
	docPath, err := filepath.Abs(filepath.Join("..", "..", "docs", "walkthrough.md"))
	if err != nil {
		t.Fatal(err)
	}
	doc, err := os.ReadFile(docPath)
	if err != nil {
		t.Fatal(err)
	}
	t.Chdir(t.TempDir())
	lines := strings.Split(string(doc), "\n")
	var out []string
	inConsole, ran := false, 0
	for i := 0; i < len(lines); i++ {
		l := lines[i]
		out = append(out, l)
		switch {
		case l == "```console":
			inConsole = true
			continue
		case inConsole && l == "```":
			inConsole = false
			continue
		case !inConsole || !strings.HasPrefix(l, "$ crossform "):
			continue
		}
		// The documented output runs to the next command or the block's end.
		var want []string
		for i+1 < len(lines) && !strings.HasPrefix(lines[i+1], "$ ") && lines[i+1] != "```" {
			i++
			want = append(want, lines[i])
		}
		wantCode := 0
		if n := len(want); n > 0 && strings.HasPrefix(want[n-1], "[exit ") {
			fmt.Sscanf(want[n-1], "[exit %d]", &wantCode)
			want = want[:n-1]
		}
		args := splitArgs(strings.TrimPrefix(l, "$ crossform "))
		var stdout, stderr bytes.Buffer
		code := run(context.Background(), args, strings.NewReader(""), &stdout, &stderr)
		ran++
		got := strings.Split(strings.TrimRight(stdout.String(), "\n"), "\n")
		if stdout.Len() == 0 {
			got = nil
		}
		if *update {
			if len(got) > walkMaxLines {
				got = append(got[:walkMaxLines], "[…]")
			}
			out = append(out, got...)
			if code != 0 {
				out = append(out, fmt.Sprintf("[exit %d]", code))
			}
			continue
		}
		if code != wantCode {
			t.Errorf("%s\nexit %d, want %d; stderr:\n%s", l, code, wantCode, stderr.String())
		}
		prefix := len(want) > 0 && want[len(want)-1] == "[…]"
		if prefix {
			want = want[:len(want)-1]
		}
		if prefix && len(got) > len(want) {
			got = got[:len(want)]
		}
		if strings.Join(got, "\n") != strings.Join(want, "\n") {
			t.Errorf("%s\noutput differs from docs/walkthrough.md (rerun with -update and review the diff):\n got:\n%s\nwant:\n%s", l, strings.Join(got, "\n"), strings.Join(want, "\n"))
		}
	}
	if ran < 10 {
		t.Fatalf("ran %d documented commands, want the whole walk-through", ran)
	}
	if *update {
		if err := os.WriteFile(docPath, []byte(strings.Join(out, "\n")), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}
