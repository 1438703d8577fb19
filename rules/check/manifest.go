package check

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"time"

	"github.com/crossform/crossform/dataset"
	"github.com/crossform/crossform/internal/atomicfile"
	"github.com/crossform/crossform/rules"
)

// ManifestSchema names the manifest layout.
const ManifestSchema = "crossform.manifest/1"

// FileHash is a file and the SHA-256 of its content.
type FileHash struct {
	Path   string `json:"path"`
	SHA256 string `json:"sha256"` // lowercase hex
	Bytes  int64  `json:"bytes"`
}

// HashFile returns the SHA-256 of the file at path.
func HashFile(path string) (FileHash, error) {
	f, err := os.Open(path)
	if err != nil {
		return FileHash{}, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return FileHash{}, fmt.Errorf("hashing %s: %w", path, err)
	}
	return FileHash{Path: path, SHA256: hex.EncodeToString(h.Sum(nil)), Bytes: n}, nil
}

// ManifestCounts are the counts a run produced.
type ManifestCounts struct {
	Rules             int                    `json:"rules"`
	RulesEvaluated    int                    `json:"rules_evaluated"`
	RulesNotEvaluable int                    `json:"rules_not_evaluable"`
	Findings          int                    `json:"findings"`
	BySeverity        map[rules.Severity]int `json:"by_severity"`
	// Classes is set when the run was compared with a previous listing.
	Classes *ClassCounts `json:"classes,omitempty"`
}

// A Manifest records one checker run so that its listing can be reproduced
// and attributed (EDIT-CHECKS.md §5): tool version, every input file with its
// SHA-256, the rule set's path and hash, the UTC time, the parameters and the
// counts.
type Manifest struct {
	Schema      string    `json:"schema"`
	ToolVersion string    `json:"tool_version"`
	Created     time.Time `json:"created_utc"`
	// Study is the path the study was read from; Inputs every file read
	// (the study's tables and the extra inputs), sorted by path.
	Study   string     `json:"study"`
	Inputs  []FileHash `json:"inputs"`
	RuleSet FileHash   `json:"rule_set"`
	// Parameters are the run's settings, flag name → value.
	Parameters map[string]string `json:"parameters"`
	Counts     ManifestCounts    `json:"counts"`
	// Outputs are the files the run wrote, added by the caller (AddOutput).
	Outputs []FileHash `json:"outputs,omitempty"`
}

// newManifest builds the manifest of a run.
func newManifest(rs *rules.RuleSet, study *dataset.Study, res *Result, o Options) (*Manifest, error) {
	now := time.Now
	if o.Now != nil {
		now = o.Now
	}
	m := &Manifest{Schema: ManifestSchema, ToolVersion: o.ToolVersion, Created: now().UTC(), Parameters: map[string]string{}}
	for k, v := range o.Parameters {
		m.Parameters[k] = v
	}
	m.Parameters["include_proposed"] = strconv.FormatBool(o.IncludeProposed)
	so := o.Sites.withDefaults()
	m.Parameters["site_alpha"] = strconv.FormatFloat(so.Alpha, 'g', -1, 64)
	m.Parameters["site_min_subjects"] = strconv.Itoa(so.MinSubjects)
	m.Parameters["site_min_evaluations"] = strconv.Itoa(so.MinEvaluations)

	files := map[string]bool{}
	if study != nil {
		m.Study = study.Path
		for _, t := range study.Tables {
			if t.Source != "" {
				files[t.Source] = true
			}
		}
	}
	for _, p := range o.Inputs {
		files[p] = true
	}
	paths := make([]string, 0, len(files))
	for p := range files {
		paths = append(paths, p)
	}
	sort.Strings(paths)
	for _, p := range paths {
		if fi, err := os.Stat(p); err == nil && fi.IsDir() {
			continue // a folder source: its files are listed on their own
		}
		h, err := HashFile(p)
		if err != nil {
			return nil, fmt.Errorf("manifest: %w", err)
		}
		m.Inputs = append(m.Inputs, h)
	}
	if m.Inputs == nil {
		m.Inputs = []FileHash{}
	}
	m.RuleSet = FileHash{Path: rs.Path, SHA256: rs.Hash()}
	if rs.Path != "" {
		if fi, err := os.Stat(rs.Path); err == nil {
			m.RuleSet.Bytes = fi.Size()
		}
	}
	m.Counts = ManifestCounts{Rules: len(res.Rules), RulesNotEvaluable: len(res.NotEvaluable),
		Findings: len(res.Findings), BySeverity: map[rules.Severity]int{}}
	m.Counts.RulesEvaluated = m.Counts.Rules - m.Counts.RulesNotEvaluable
	for _, f := range res.Findings {
		m.Counts.BySeverity[f.Severity]++
	}
	return m, nil
}

// SetClasses records the classification against a previous listing and
// that listing's path and hash among the inputs.
func (m *Manifest) SetClasses(c ClassCounts, previous string) error {
	m.Counts.Classes = &c
	if previous == "" {
		return nil
	}
	h, err := HashFile(previous)
	if err != nil {
		return fmt.Errorf("manifest: %w", err)
	}
	m.Inputs = append(m.Inputs, h)
	sort.Slice(m.Inputs, func(i, j int) bool { return m.Inputs[i].Path < m.Inputs[j].Path })
	m.Parameters["previous"] = previous
	return nil
}

// AddOutput records a file the run wrote, with its hash.
func (m *Manifest) AddOutput(path string) error {
	h, err := HashFile(path)
	if err != nil {
		return fmt.Errorf("manifest: %w", err)
	}
	m.Outputs = append(m.Outputs, h)
	sort.Slice(m.Outputs, func(i, j int) bool { return m.Outputs[i].Path < m.Outputs[j].Path })
	return nil
}

// WriteJSON writes m as indented JSON (map keys sorted, so the output is
// deterministic for a given manifest).
func (m *Manifest) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(m)
}

// WriteFile writes m as JSON to path atomically: to a temporary file in the
// same folder, synced, then renamed over path, so a reader never sees half a
// manifest.
func (m *Manifest) WriteFile(path string) error {
	return WriteFileAtomic(path, m.WriteJSON)
}

// WriteFileAtomic writes path through write atomically (package
// internal/atomicfile): a reader or a crash sees the old file or the new
// one, never a part.
func WriteFileAtomic(path string, write func(io.Writer) error) error {
	return atomicfile.Write(path, write)
}
