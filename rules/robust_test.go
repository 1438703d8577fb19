package rules

import (
	"encoding/csv"
	"math"
	"math/rand/v2"
	"os"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/crossform/crossform/dataset"
)

// readMASS reads a CSV exported by testdata/rules/export_mass.R.
func readMASS(t testing.TB, name string) *dataset.Table {
	t.Helper()
	tb, err := dataset.ReadCSVFile("../testdata/rules/"+name, dataset.CSVOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return tb
}

func floats(t testing.TB, tb *dataset.Table, name string) []float64 {
	c := tb.Col(name)
	if c == nil {
		t.Fatalf("no column %s", name)
	}
	out := make([]float64, tb.NRows)
	for i := range out {
		out[i] = c.Float(i)
		if c.Storage == dataset.StoreCode {
			out[i], _ = strconv.ParseFloat(c.String(i), 64)
		}
	}
	return out
}

// TestTheilSenScipy compares TheilSen with scipy.stats.theilslopes on R's
// MASS data sets; the values, and the scipy and numpy versions, are in
// testdata/rules/theilsen_fixture.csv (made by make_theilsen.py).
func TestTheilSenScipy(t *testing.T) {
	f, err := os.Open("../testdata/rules/theilsen_fixture.csv")
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
	if len(recs) < 5 {
		t.Fatalf("fixture has %d rows, want a header and 4 cases", len(recs))
	}
	for _, rec := range recs[1:] {
		name, file, xn, yn, tr := rec[0], rec[1], rec[2], rec[3], rec[4]
		wantS, _ := strconv.ParseFloat(rec[6], 64)
		wantI, _ := strconv.ParseFloat(rec[7], 64)
		t.Run(name, func(t *testing.T) {
			tb := readMASS(t, file)
			x, y := floats(t, tb, xn), floats(t, tb, yn)
			if tr == "log" {
				for i := range x {
					x[i], y[i] = math.Log(x[i]), math.Log(y[i])
				}
			}
			s, c := TheilSen(x, y)
			if math.Abs(s-wantS) > 1e-12*math.Max(1, math.Abs(wantS)) || math.Abs(c-wantI) > 1e-9*math.Max(1, math.Abs(wantI)) {
				t.Errorf("TheilSen(%s, %s) = %.15g, %.15g; want %.15g, %.15g (scipy.stats.theilslopes, %s)", xn, yn, s, c, wantS, wantI, file)
			}
		})
	}
}

// TestRobustR compares Median, MAD and Quantile with R 4.2.2 (calls in
// testdata/rules/robust_fixture.csv, made by export_mass.R).
func TestRobustR(t *testing.T) {
	f, err := os.Open("../testdata/rules/robust_fixture.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	cats, bw := readMASS(t, "cats.csv"), readMASS(t, "birthwt.csv")
	sorted := func(v []float64) []float64 {
		s := append([]float64(nil), v...)
		sort.Float64s(s)
		return s
	}
	got := map[string]float64{
		"mad cats Hwt":    MAD(floats(t, cats, "Hwt")),
		"mad birthwt bwt": MAD(floats(t, bw, "bwt")),
		"q25 cats Hwt":    Quantile(sorted(floats(t, cats, "Hwt")), 0.25),
		"q75 birthwt bwt": Quantile(sorted(floats(t, bw, "bwt")), 0.75),
		"median cats Bwt": Median(floats(t, cats, "Bwt")),
	}
	if len(recs)-1 != len(got) {
		t.Fatalf("fixture has %d cases, test knows %d", len(recs)-1, len(got))
	}
	for _, rec := range recs[1:] {
		want, _ := strconv.ParseFloat(rec[1], 64)
		g, ok := got[rec[0]]
		if !ok {
			t.Errorf("unknown fixture case %q", rec[0])
			continue
		}
		if math.Abs(g-want) > 1e-12*math.Max(1, math.Abs(want)) {
			t.Errorf("%s = %.17g, want %.17g (R 4.2.2: %s)", rec[0], g, want, rec[2])
		}
	}
}

func TestNiceIn(t *testing.T) {
	// Hand-derived: the shortest number in (lo, hi].
	cases := []struct{ lo, hi, want float64 }{
		{2495, 2523, 2500}, {0, 1, 1}, {0.5, 1.5, 1}, {17.2, 17.9, 17.5}, {-3.2, -2.1, -3}, {130, 131, 131}, {5, 5, 5},
	}
	for _, c := range cases {
		if got := niceIn(c.lo, c.hi); got != c.want {
			t.Errorf("niceIn(%g, %g) = %g, want %g", c.lo, c.hi, got, c.want)
		}
	}
}

func TestTheilSenRobust(t *testing.T) {
	// Theoretical: a line y = 2x + 1 with 10% of y replaced by wild values
	// keeps the Theil–Sen slope (breakdown point 29%, Sen 1968) near 2.
	n := 200
	x, y := make([]float64, n), make([]float64, n)
	for i := range x {
		x[i] = float64(i)
		y[i] = 2*x[i] + 1
		if i%10 == 3 {
			y[i] = 1e6
		}
	}
	s, c := TheilSen(x, y)
	if math.Abs(s-2) > 0.05 || math.Abs(c-1) > 10 {
		t.Errorf("TheilSen with 10%% outliers = %g, %g; want about 2, 1", s, c)
	}
	if !strings.HasPrefix(strconv.FormatFloat(MAD([]float64{1, 2, 3, 4, 1000}), 'f', 4, 64), "1.4826") {
		t.Errorf("MAD([1 2 3 4 1000]) = %g, want 1.4826 (median 3, deviations 2 1 0 1 997)", MAD([]float64{1, 2, 3, 4, 1000}))
	}
}

// TestMedianSelect checks the selection-based median against sorting on
// random slices with ties (theoretical: both are the middle order statistic).
func TestMedianSelect(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 9))
	for trial := 0; trial < 200; trial++ {
		n := 1 + r.IntN(300)
		v := make([]float64, n)
		for i := range v {
			v[i] = float64(r.IntN(20))
		}
		s := append([]float64(nil), v...)
		sort.Float64s(s)
		want := s[n/2]
		if n%2 == 0 {
			want = (s[n/2-1] + s[n/2]) / 2
		}
		if got := Median(v); got != want {
			t.Fatalf("Median(%v) = %g, want %g", v, got, want)
		}
	}
}
