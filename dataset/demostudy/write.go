package demostudy

import (
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"
)

// truthHeader is the header row of _truth.csv.
var truthHeader = []string{"class", "domain", "USUBJID", "SITEID", "VISITNUM", "key", "detail"}

// WriteCSV writes one file per form, <name>.csv, and _truth.csv (header class, domain,
// USUBJID, SITEID, VISITNUM, key, detail) into dir, creating dir if needed. Files are comma-separated with a header row, quoted as RFC 4180 by
// encoding/csv, LF line ends; rows keep the order of s.Forms and s.Truth, so equal
// studies give byte-identical files. _truth.csv holds only the header when nothing is
// planted. VISITNUM is empty in _truth.csv when Problem.VisitNum is 0.
func (s *Study) WriteCSV(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("demostudy: %w", err)
	}
	names := make([]string, 0, len(s.Forms))
	for name := range s.Forms {
		names = append(names, name)
	}
	slices.Sort(names)
	for _, name := range names {
		f := s.Forms[name]
		if err := writeFile(filepath.Join(dir, name+".csv"), func(w io.Writer) error {
			return writeRows(w, f.Header, f.Rows)
		}); err != nil {
			return err
		}
	}
	rows := make([][]string, len(s.Truth))
	for i, p := range s.Truth {
		vn := ""
		if p.VisitNum != 0 {
			vn = strconv.FormatFloat(p.VisitNum, 'f', -1, 64)
		}
		rows[i] = []string{p.Class, p.Domain, p.USUBJID, p.SiteID, vn, p.Key, p.Detail}
	}
	return writeFile(filepath.Join(dir, TruthFile), func(w io.Writer) error {
		return writeRows(w, truthHeader, rows)
	})
}

func writeRows(w io.Writer, header []string, rows [][]string) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(header); err != nil {
		return err
	}
	if err := cw.WriteAll(rows); err != nil {
		return err
	}
	return cw.Error()
}

func writeFile(path string, write func(io.Writer) error) (err error) {
	f, err := os.Create(path)
	if err != nil {
		return fmt.Errorf("demostudy: %w", err)
	}
	defer func() {
		if cerr := f.Close(); cerr != nil && err == nil {
			err = fmt.Errorf("demostudy: %w", cerr)
		}
	}()
	if err := write(f); err != nil {
		return fmt.Errorf("demostudy: writing %s: %w", path, err)
	}
	return nil
}

// TruthFile is the name of the ground-truth file WriteCSV writes next to the
// forms. Its leading underscore keeps dataset.Open from reading it as a form.
const TruthFile = "_truth.csv"
