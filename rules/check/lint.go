package check

import (
	"fmt"
	"strings"

	"github.com/crossform/crossform/rules"
)

// LintError refuses a rule set that fails rules.Lint: Issues are the
// errors (not the warnings), each with its YAML line.
type LintError struct {
	Path   string
	Issues []rules.LintIssue
}

func (e *LintError) Error() string {
	msgs := make([]string, len(e.Issues))
	for i, is := range e.Issues {
		msgs[i] = is.Error()
	}
	return fmt.Sprintf("%s: rule set fails lint (%d error(s)), fix it before checking:\n  %s", e.Path, len(e.Issues), strings.Join(msgs, "\n  "))
}

// lint runs rules.Lint on rs alone (no tables: a variable missing from this
// extract makes its rule not evaluable, it does not refuse the rule set) and
// splits errors from warnings.
func lint(rs *rules.RuleSet) (errs []rules.LintIssue, warnings []string) {
	for _, is := range rules.Lint(rs) {
		if is.Warning {
			warnings = append(warnings, is.Error())
		} else {
			errs = append(errs, is)
		}
	}
	return errs, warnings
}

// severity returns r's severity, minor when unset (as rules.Lint warns).
func severity(r *rules.Rule) rules.Severity {
	if r.Severity == "" {
		return rules.Minor
	}
	return r.Severity
}
