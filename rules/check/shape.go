package check

import (
	"github.com/crossform/crossform/dataset"
)

// Shape returns the table of study that rules at level run on ("subject",
// "visit", "record:AE", "table:NAME"; dataset.ParseLevel), shaped by
// Study.Shape with o, and Shape's report.
func Shape(study *dataset.Study, level string, o dataset.ShapeOptions) (*dataset.Table, *dataset.ShapeReport, error) {
	l, err := dataset.ParseLevel(level)
	if err != nil {
		return nil, nil, err
	}
	return study.Shape(l, o)
}

// canonicalLevel returns level as dataset.ParseLevel normalises it
// ("record:ae" → "record:AE"), or level unchanged when it does not parse.
func canonicalLevel(level string) string {
	if l, err := dataset.ParseLevel(level); err == nil {
		return l.String()
	}
	return level
}
