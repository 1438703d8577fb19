package demostudy_test

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/crossform/crossform/dataset/demostudy"
)

// ExampleGenerate prints the size of the default first extract and its planted
// problems per class.
func ExampleGenerate() {
	st, err := demostudy.Generate(demostudy.DefaultConfig())
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("data cut", st.DataCut, "-", len(st.Forms["dm"].Rows), "subjects,", len(st.Forms["vs"].Rows), "VS records")
	n := map[string]int{}
	for _, p := range st.Truth {
		n[p.Class]++
	}
	for _, c := range demostudy.ProblemClasses() {
		fmt.Printf("%-24s %3d\n", c, n[c])
	}
	// Output:
	// data cut 2025-12-30 - 600 subjects, 17538 VS records
	// weight_in_pounds          99
	// bp_transposed             20
	// ae_end_before_start        3
	// pregnancy_male             3
	// bmi_mismatch              22
	// cm_gate_contradiction      5
	// severity_grade_mismatch    5
	// liver_enzyme_outlier       8
	// fabricated_subjects        5
	// visit_before_consent       6
}

// ExampleStudy_WriteCSV writes the second data cut as CSV files.
func ExampleStudy_WriteCSV() {
	cfg := demostudy.DefaultConfig()
	cfg.Cut = 2
	st, err := demostudy.Generate(cfg)
	if err != nil {
		fmt.Println(err)
		return
	}
	dir, err := os.MkdirTemp("", "cfx201")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)
	if err := st.WriteCSV(dir); err != nil {
		fmt.Println(err)
		return
	}
	files, _ := filepath.Glob(filepath.Join(dir, "*.csv"))
	for _, f := range files {
		fmt.Print(filepath.Base(f), " ")
	}
	fmt.Println()
	// Output:
	// _truth.csv ae.csv cm.csv dm.csv ds.csv ex.csv lb.csv sv.csv vs.csv
}
