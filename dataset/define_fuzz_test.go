package dataset

import (
	"bytes"
	"path/filepath"
	"testing"
)

// FuzzReadDefine: no panics, every error positioned, and VarSpecs never
// fails on what was read.
func FuzzReadDefine(f *testing.F) {
	addSeeds(f, filepath.Join(defineDir, "*.xml"))
	addSeeds(f, filepath.Join(defineDir, "study", "*.xml"))
	f.Fuzz(func(t *testing.T, b []byte) {
		d, err := ReadDefine("fuzz.xml", bytes.NewReader(b))
		if err != nil {
			checkParsed(t, nil, err)
			return
		}
		for _, ds := range d.Datasets {
			specs, _ := d.VarSpecs(ds.Name)
			for name, s := range specs {
				if s.Type == Ordinal && len(s.Levels) == 0 && name != "" {
					t.Fatalf("%s: ordinal without levels", name)
				}
			}
			_ = d.Keys(ds)
			_ = d.TextVars(ds.Name)
		}
	})
}
