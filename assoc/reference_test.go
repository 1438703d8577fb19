package assoc

import (
	"context"
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// Reference values computed by R and SciPy on open data sets shipped in
// Debian packages: survival::lung (Loprinzi CL et al. 1994, J Clin Oncol
// 12:601–607), survival::pbc (Therneau & Grambsch 2000, Modeling Survival
// Data, Springer; Mayo Clinic PBC trial) and MASS::birthwt (Hosmer &
// Lemeshow 1989, Applied Logistic Regression, Wiley). The data, the scripts
// (make_reference.R, make_reference.py) and the library versions are in
// testdata/assoc; see its README.md.

const refDir = "../testdata/assoc"

type refRow struct {
	file, ds, x, y, measure, call string
	value                         float64
}

func readRef(t *testing.T, name string) []refRow {
	t.Helper()
	f, err := os.Open(filepath.Join(refDir, name))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) < 2 || strings.Join(recs[0], ",") != "dataset,x,y,measure,value,call" {
		t.Fatalf("%s: unexpected header %q", name, recs[0])
	}
	var out []refRow
	for i, rec := range recs[1:] {
		v, err := strconv.ParseFloat(rec[4], 64)
		if err != nil {
			t.Fatalf("%s: record %d: %v", name, i+2, err)
		}
		out = append(out, refRow{file: name, ds: rec[0], x: rec[1], y: rec[2], measure: rec[3], value: v, call: rec[5]})
	}
	return out
}

// readData reads a reference data set as float columns, NaN where empty.
func readData(t *testing.T, ds string) map[string][]float64 {
	t.Helper()
	f, err := os.Open(filepath.Join(refDir, ds+".csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	cols := map[string][]float64{}
	for j, name := range recs[0] {
		v := make([]float64, len(recs)-1)
		for i, rec := range recs[1:] {
			if rec[j] == "" {
				v[i] = math.NaN()
				continue
			}
			if v[i], err = strconv.ParseFloat(rec[j], 64); err != nil {
				t.Fatalf("%s.csv: line %d: %v", ds, i+2, err)
			}
		}
		cols[name] = v
	}
	return cols
}

// codes returns 0-based codes of the sorted distinct values of x and y over
// their complete pairs, −1 elsewhere: the crosstab SciPy and R build.
func codes(x, y []float64) ([]int, []int) {
	cx, cy := make([]int, len(x)), make([]int, len(y))
	dx, dy := dataset.Distinct(x), dataset.Distinct(y)
	for i := range x {
		cx[i], cy[i] = -1, -1
		if !math.IsNaN(x[i]) && !math.IsNaN(y[i]) {
			cx[i], _ = slices.BinarySearch(dx, x[i])
			cy[i], _ = slices.BinarySearch(dy, y[i])
		}
	}
	return cx, cy
}

// kernelValue computes the quantity a reference row names with the kernels.
func kernelValue(data map[string][]float64, r refRow) (float64, bool) {
	x, y := data[r.x], data[r.y]
	switch r.measure {
	case "spearman":
		return Spearman(x, y).Rho, true
	case "spearman_p":
		return Spearman(x, y).P, true
	case "cramers_v", "cramers_chi2", "cramers_p":
		res := CramersV(Crosstab(codes(x, y)))
		return map[string]float64{"cramers_v": res.V, "cramers_chi2": res.Chi2, "cramers_p": res.P}[r.measure], true
	case "kruskal_h", "kruskal_p":
		cx, cg := codes(x, y)
		xs := slices.Clone(x)
		for i := range xs {
			if cx[i] < 0 {
				xs[i] = math.NaN()
			}
		}
		res := KruskalWallis(xs, cg)
		return map[string]float64{"kruskal_h": res.H, "kruskal_p": res.P}[r.measure], true
	case "somers_dyx", "somers_dxy", "somers_se_yx", "somers_se_xy", "somers_z", "somers_p", "somers_dyx_hmisc":
		res := SomersD(Crosstab(codes(x, y)))
		return map[string]float64{"somers_dyx": res.DYX, "somers_dxy": res.DXY, "somers_se_yx": res.SEYX,
			"somers_se_xy": res.SEXY, "somers_z": res.Z, "somers_p": res.P, "somers_dyx_hmisc": res.DYX}[r.measure], true
	}
	return 0, false
}

// TestKernelsReference checks every value of reference_r.csv and
// reference_scipy.csv: estimates to 1e-12 relative, p-values to 1e-9.
func TestKernelsReference(t *testing.T) {
	rows := append(readRef(t, "reference_r.csv"), readRef(t, "reference_scipy.csv")...)
	data := map[string]map[string][]float64{}
	checked := map[string]int{}
	for _, r := range rows {
		if data[r.ds] == nil {
			data[r.ds] = readData(t, r.ds)
		}
		got, ok := kernelValue(data[r.ds], r)
		if !ok {
			t.Errorf("%s: unknown measure %q", r.file, r.measure)
			continue
		}
		tol := 1e-12
		if strings.HasSuffix(r.measure, "_p") {
			tol = 1e-9
		}
		if !near(got, r.value, tol) {
			t.Errorf("%s %s(%s, %s) = %.17g, want %.17g (%s: %s)", r.ds, r.measure, r.x, r.y, got, r.value, r.file, r.call)
		}
		checked[r.file+" "+r.measure]++
	}
	t.Logf("checked: %v", checked)
	if len(checked) < 15 {
		t.Errorf("only %d kinds of reference value checked", len(checked))
	}
}

// TestAllPairsReference runs the engine on the reference data sets read by
// dataset.ReadCSVFile (with pbc's status and birthwt's race declared
// nominal) and checks every pair whose measure has a reference value: each
// Spearman pair against R's pairwise-complete cor matrix, and the Somers' D,
// Kruskal–Wallis and Cramér's V pairs of pairs.csv against R.
func TestAllPairsReference(t *testing.T) {
	ref := map[string]float64{}
	for _, r := range readRef(t, "reference_r.csv") {
		ref[r.ds+"|"+r.x+"|"+r.y+"|"+r.measure] = r.value
	}
	nominal := map[string]dataset.VarSpec{
		"status": {Type: dataset.Nominal, Source: "test"}, "race": {Type: dataset.Nominal, Source: "test"}}
	checked := map[Measure]int{}
	for _, ds := range []string{"lung", "pbc", "birthwt"} {
		opts := dataset.CSVOptions{Keys: []string{}}
		if ds != "lung" {
			opts.Infer.Vars = nominal
		}
		tbl, err := dataset.ReadCSVFile(filepath.Join(refDir, ds+".csv"), opts)
		if err != nil {
			t.Fatal(err)
		}
		m, err := AllPairs(context.Background(), tbl, Options{MinPairs: 2, Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		for k := range m.Pairs {
			pr := &m.Pairs[k]
			x, y := m.Names[pr.I], m.Names[pr.J]
			look := func(a, b, measure string) (float64, bool) {
				v, ok := ref[ds+"|"+a+"|"+b+"|"+measure]
				return v, ok
			}
			var want float64
			var ok bool
			got := pr.Estimate
			switch pr.Measure {
			case MeasureSpearman:
				want, ok = look(x, y, "spearman")
			case MeasureSomersD:
				if want, ok = look(x, y, "somers_dyx"); !ok {
					want, ok = look(y, x, "somers_dxy")
				}
			case MeasureKruskal:
				h, okh := look(x, y, "kruskal_h")
				if !okh {
					h, okh = look(y, x, "kruskal_h")
				}
				want, ok = h/float64(pr.N-1), okh
			case MeasureCramersV:
				if want, ok = look(x, y, "cramers_v"); !ok {
					want, ok = look(y, x, "cramers_v")
				}
			}
			if !ok {
				continue
			}
			checked[pr.Measure]++
			if !near(got, want, 1e-12) {
				t.Errorf("%s %s: got %.17g, want %.17g (R, reference_r.csv)", ds, m.Describe(pr), got, want)
			}
		}
	}
	t.Logf("engine pairs checked against R: %v", checked)
	for _, ms := range []Measure{MeasureSpearman, MeasureSomersD, MeasureKruskal, MeasureCramersV} {
		if checked[ms] == 0 {
			t.Errorf("no %s pair of the engine checked against R", ms)
		}
	}
}
