package main

import (
	"fmt"

	"github.com/crossform/crossform/dataset"
)

// loadTable reads the study at path and returns the table to analyse: a
// single file's table as read; for an SDTM folder (a DM table with USUBJID),
// the study shaped at --level (default "visit"); for another folder, the
// table named by --level table:NAME.
func (d *dataFlags) loadTable(path string, g *globalOptions) (*dataset.Table, *dataset.Study, error) {
	s, err := d.open(path)
	if err != nil {
		return nil, nil, err
	}
	for _, w := range s.Warnings {
		g.log.Warn(w)
	}
	lv := d.level
	if lv == "" {
		switch {
		case len(s.Tables) == 1:
			return s.Tables[0], s, nil
		case s.IsSDTM():
			lv = "visit"
		default:
			return nil, nil, usageError{fmt.Errorf("%s holds %d tables and no SDTM DM table: choose one with --level table:NAME", path, len(s.Tables))}
		}
	}
	l, err := dataset.ParseLevel(lv)
	if err != nil {
		return nil, nil, usageError{err}
	}
	o, _ := d.options()
	t, rep, err := s.Shape(l, dataset.ShapeOptions{Infer: o.CSV.Infer})
	if err != nil {
		return nil, nil, err
	}
	for _, w := range rep.Warnings {
		g.log.Warn(w)
	}
	for _, m := range rep.MixedUnits {
		g.log.Warn("test not pivoted: more than one unit", "test", fmt.Sprintf("%+v", m))
	}
	if n := len(rep.SubjectsWithoutDM); n > 0 {
		g.log.Warn("subjects not in DM were dropped", "subjects", n)
	}
	for _, dr := range rep.Dropped {
		g.log.Debug("rows not used", "detail", fmt.Sprintf("%+v", dr))
	}
	g.log.Info("table shaped", "level", l.String(), "rows", t.NRows, "variables", len(t.Cols))
	return t, s, nil
}
