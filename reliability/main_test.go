package reliability

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sync"
	"testing"
)

// childEnv selects a child mode when this test binary is re-executed by a
// test (childMain); unset in a normal run.
const childEnv = "RELIABILITY_CHILD"

func TestMain(m *testing.M) {
	if mode := os.Getenv(childEnv); mode != "" {
		if err := childMain(mode); err != nil {
			fmt.Fprintln(os.Stderr, "child:", err)
			os.Exit(3)
		}
		os.Exit(0)
	}
	code := m.Run()
	if binDir != "" {
		os.RemoveAll(binDir)
	}
	os.Exit(code)
}

// childMain runs one child mode; it returns only on error (the parent kills it).
func childMain(mode string) error {
	switch mode {
	case "ruleset":
		return childRuleSet(os.Getenv("RELIABILITY_PATH"))
	case "outputs":
		return childOutputs(os.Getenv("RELIABILITY_PATH"))
	}
	return fmt.Errorf("unknown child mode %q", mode)
}

var (
	binOnce sync.Once
	binDir  string
	binPath string
	binErr  error
)

// crossformBin builds cmd/crossform once per test binary run and returns the
// executable's path.
func crossformBin(t *testing.T) string {
	t.Helper()
	binOnce.Do(func() {
		binDir, binErr = os.MkdirTemp("", "crossform-reliability-")
		if binErr != nil {
			return
		}
		binPath = filepath.Join(binDir, "crossform")
		if runtime.GOOS == "windows" {
			binPath += ".exe"
		}
		out, err := exec.Command("go", "build", "-o", binPath, "github.com/crossform/crossform/cmd/crossform").CombinedOutput()
		if err != nil {
			binErr = fmt.Errorf("go build ./cmd/crossform: %v\n%s", err, out)
		}
	})
	if binErr != nil {
		t.Fatal(binErr)
	}
	return binPath
}
