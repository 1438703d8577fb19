package rules

import (
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"
)

// The decision actions Decide takes.
const (
	ActionAccept = "accept"
	ActionReject = "reject"
	ActionRetire = "retire"
)

// transitions gives, per action, the statuses it may start from and the
// status it leads to. Accepting a rejected or retired rule is a reviewer's
// explicit change of mind and is allowed; Merge never does it.
var transitions = map[string]struct {
	from []Status
	to   Status
}{
	ActionAccept: {[]Status{StatusProposed, StatusRejected, StatusRetired}, StatusAccepted},
	ActionReject: {[]Status{StatusProposed}, StatusRejected},
	ActionRetire: {[]Status{StatusAccepted}, StatusRetired},
}

// Decide applies action (accept, reject or retire) to the rules ids name,
// recording in each rule's history who decided, when (UTC) and the note. It
// changes nothing and returns an error naming every problem when any id is
// unknown, when by is empty, or when a rule's status does not allow the
// action (reject applies to proposed rules, retire to accepted ones).
func Decide(rs *RuleSet, ids []string, action, by, note string, at time.Time) error {
	tr, ok := transitions[action]
	if !ok {
		return fmt.Errorf("unknown action %q (want accept, reject or retire)", action)
	}
	if strings.TrimSpace(by) == "" {
		return errors.New("decision without a name: say who decides")
	}
	if len(ids) == 0 {
		return errors.New("no rule ids given")
	}
	var errs []error
	var todo []*Rule
	for _, id := range ids {
		r := rs.Rule(id)
		if r == nil {
			errs = append(errs, fmt.Errorf("unknown rule id %q", id))
			continue
		}
		allowed := false
		for _, s := range tr.from {
			if r.Status == s {
				allowed = true
			}
		}
		if !allowed {
			errs = append(errs, fmt.Errorf("rule %s is %s: cannot %s it", id, r.Status, action))
			continue
		}
		todo = append(todo, r)
	}
	if len(errs) > 0 {
		return errors.Join(errs...)
	}
	for _, r := range todo {
		r.Status = tr.to
		r.History = append(r.History, Event{At: at.UTC().Truncate(time.Second), By: by, Action: string(tr.to), Note: note})
	}
	return nil
}

// A Filter selects rules for a bulk decision. Zero fields match everything.
type Filter struct {
	Kind          string  // rule kind
	Level         string  // rule level
	Status        Status  // review status
	MinConfidence float64 // evidence confidence at least this; rules without evidence never match when > 0
	Var           string  // rules reading this variable
}

// Select returns the ids of the rules f matches, in file order.
func Select(rs *RuleSet, f Filter) []string {
	var out []string
	for _, r := range rs.Rules {
		if f.Kind != "" && r.Kind != f.Kind || f.Level != "" && r.Level != f.Level || f.Status != "" && r.Status != f.Status {
			continue
		}
		if f.MinConfidence > 0 && (r.Evidence == nil || r.Evidence.Confidence < f.MinConfidence) {
			continue
		}
		if f.Var != "" {
			found := false
			for _, v := range r.Vars {
				if v == f.Var {
					found = true
				}
			}
			if !found {
				continue
			}
		}
		out = append(out, r.ID)
	}
	return out
}

// A MergeReport says what Merge did, as sorted rule ids.
type MergeReport struct {
	Added     []string // new rules, now proposed
	Refreshed []string // rules already in the set whose evidence was refreshed
	Skipped   []string // proposals matching a hand-written rule, left untouched
}

// Merge folds a fresh proposal into rs: a proposal whose id is new is added
// with status proposed and its history (the proposer's "proposed" event); a
// proposal whose id exists refreshes that rule's evidence (with fingerprint)
// and, while the rule is still proposed, its tunable parameters, statement
// and query, and keeps its status and history — a rejected rule stays
// rejected, an accepted one keeps the parameters it was accepted with.
// Hand-written rules are never changed, and no rule is ever removed.
func Merge(rs *RuleSet, proposed []*Rule, fingerprint string) MergeReport {
	var rep MergeReport
	for _, p := range proposed {
		if p.ID == "" {
			p.ID = ComputeID(p)
		}
		old := rs.Rule(p.ID)
		if old == nil {
			r := *p
			r.node, r.Line = nil, 0
			if r.Status == "" {
				r.Status = StatusProposed
			}
			if r.Origin == "" {
				r.Origin = OriginProposer
			}
			r.History = append([]Event(nil), p.History...)
			if r.Evidence != nil {
				e := *r.Evidence
				e.Fingerprint = fingerprint
				r.Evidence = &e
			}
			rs.Rules = append(rs.Rules, &r)
			rep.Added = append(rep.Added, r.ID)
			continue
		}
		if old.Origin != OriginProposer {
			rep.Skipped = append(rep.Skipped, old.ID)
			continue
		}
		if p.Evidence != nil {
			e := *p.Evidence
			e.Fingerprint = fingerprint
			old.Evidence = &e
		}
		if old.Status == StatusProposed {
			old.Params, old.Statement, old.Query = p.Params, p.Statement, p.Query
			if old.Severity == "" {
				old.Severity = p.Severity
			}
		}
		rep.Refreshed = append(rep.Refreshed, old.ID)
	}
	sort.Strings(rep.Added)
	sort.Strings(rep.Refreshed)
	sort.Strings(rep.Skipped)
	return rep
}
