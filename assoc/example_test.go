package assoc_test

import (
	"context"
	"fmt"
	"math"

	"github.com/crossform/crossform/assoc"
	"github.com/crossform/crossform/dataset"
)

func ExampleSpearman() {
	// SciPy's documentation example: y has a tie (7 twice).
	r := assoc.Spearman([]float64{1, 2, 3, 4, 5}, []float64{5, 6, 7, 8, 7})
	fmt.Printf("rho %.4f p %.4f n %d\n", r.Rho, r.P, r.N)
	// A NaN drops the pair.
	r = assoc.Spearman([]float64{1, 2, 3, math.NaN(), 5}, []float64{2, 1, 4, 3, 5})
	fmt.Printf("rho %.4f n %d\n", r.Rho, r.N)
	// Output:
	// rho 0.8208 p 0.0886 n 5
	// rho 0.8000 n 4
}

func ExampleCramersV() {
	// SciPy's documentation example, a 4×2 table, row-major. V and χ² agree
	// with SciPy 1.10.1; Ṽ was recomputed from Bergsma's formula in Python.
	r := assoc.CramersV([]float64{100, 150, 203, 322, 420, 700, 320, 210}, 4, 2)
	fmt.Printf("V %.4f bias-corrected %.4f chi2 %.2f df %d\n", r.V, r.VBC, r.Chi2, r.DF)
	// Output:
	// V 0.1862 bias-corrected 0.1829 chi2 84.06 df 3
}

func ExampleSomersD() {
	// Hotel cleanliness (rows) by customer satisfaction (columns), from
	// SciPy's somersd documentation. The SEs and z agree with the pair-by-pair
	// R implementation in testdata/assoc/make_reference.R.
	r := assoc.SomersD([]float64{27, 25, 14, 7, 0, 7, 14, 18, 35, 12, 1, 3, 2, 7, 17}, 3, 5)
	fmt.Printf("d(Y|X) %.4f (SE %.4f)  d(X|Y) %.4f (SE %.4f)  z %.2f\n", r.DYX, r.SEYX, r.DXY, r.SEXY, r.Z)
	// Output:
	// d(Y|X) 0.6033 (SE 0.0527)  d(X|Y) 0.4705 (SE 0.0425)  z 10.91
}

func ExampleSomersD_codes() {
	// From two code vectors; a negative code is missing.
	sev := []int{0, 0, 1, 1, 2, 2, 2, -1}
	grade := []int{0, 1, 1, 2, 2, 3, 3, 0}
	r := assoc.SomersD(assoc.Crosstab(sev, grade))
	fmt.Printf("d(grade|severity) %.4f n %g\n", r.DYX, r.N)
	// Output:
	// d(grade|severity) 0.8750 n 7
}

func ExampleKruskalWallis() {
	// R's kruskal.test example (Hollander & Wolfe 1973, p. 116).
	x := []float64{2.9, 3.0, 2.5, 2.6, 3.2, 3.8, 2.7, 4.0, 2.4, 2.8, 3.4, 3.7, 2.2, 2.0}
	g := []int{0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 2}
	r := assoc.KruskalWallis(x, g)
	fmt.Printf("H %.5f df %d p %.2f epsilon² %.4f\n", r.H, r.DF, r.P, r.EpsilonSq)
	// Output:
	// H 0.77143 df 2 p 0.68 epsilon² 0.0593
}

func ExampleMissingPhi() {
	// Two lab tests missing together when a visit was skipped.
	a := []bool{true, true, false, false, false, false, true, false}
	b := []bool{true, true, false, false, false, true, true, false}
	r := assoc.MissingPhi(a, b)
	fmt.Printf("phi %.4f\n", r.Phi)
	// Output:
	// phi 0.7746
}

func ExampleBenjaminiHochberg() {
	q := assoc.BenjaminiHochberg([]float64{0.01, 0.04, 0.03, 0.005, math.NaN(), 0.2}, nil)
	fmt.Println(q)
	// Output:
	// [0.025 0.05 0.05 0.025 NaN 0.2]
}

func ExampleAllPairs() {
	t := dataset.NewTable("vs", 30)
	sbp, dbp := make([]float64, 30), make([]float64, 30)
	arm := make([]int32, 30)
	for i := range sbp {
		sbp[i] = 110 + float64(i%10)*3
		dbp[i] = 70 + float64(i%10)*2 + float64(i%3)
		arm[i] = int32(i % 2)
	}
	sbp[4] = math.NaN()
	for _, c := range []*dataset.Column{
		dataset.NewFloatColumn("SYSBP", dataset.Continuous, sbp),
		dataset.NewFloatColumn("DIABP", dataset.Continuous, dbp),
		dataset.NewCodeColumn("ARM", dataset.Binary, arm, []string{"A", "B"}),
	} {
		if err := t.Add(c); err != nil {
			fmt.Println(err)
			return
		}
	}
	m, err := assoc.AllPairs(context.Background(), t, assoc.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for k := range m.Pairs {
		p := &m.Pairs[k]
		fmt.Printf("%s × %s: %s %.3f strength %.3f n %d\n", m.Names[p.I], m.Names[p.J], p.Measure, p.Estimate, p.Strength, p.N)
	}
	// Output:
	// SYSBP × DIABP: spearman 0.990 strength 0.990 n 29
	// SYSBP × ARM: somers_d 0.111 strength 0.200 n 29
	// DIABP × ARM: somers_d 0.103 strength 0.196 n 30
}
