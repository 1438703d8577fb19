package assoc

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Property tests on seeded random data, with ties and missing values. The
// expected relations are theoretical (hand-derived from the definitions).

func randData(rng *rand.Rand, n int, levels int, miss float64) []float64 {
	v := make([]float64, n)
	for i := range v {
		switch {
		case rng.Float64() < miss:
			v[i] = math.NaN()
		case levels > 0:
			v[i] = float64(rng.IntN(levels))
		default:
			v[i] = rng.NormFloat64()
		}
	}
	return v
}

func TestSpearmanProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 200; trial++ {
		n := 5 + rng.IntN(60)
		x := randData(rng, n, trial%3*4, 0.15)
		y := randData(rng, n, trial%5, 0.15)
		for i := range y { // make them related
			if !math.IsNaN(x[i]) && !math.IsNaN(y[i]) && trial%2 == 0 {
				y[i] += x[i]
			}
		}
		r := Spearman(x, y)
		if math.IsNaN(r.Rho) {
			continue
		}
		// Symmetry: ρ(x, y) = ρ(y, x) exactly (the integer sums commute).
		if s := Spearman(y, x); s.Rho != r.Rho || s.P != r.P {
			t.Errorf("trial %d: ρ(x,y) = %g, ρ(y,x) = %g (theoretical: symmetric)", trial, r.Rho, s.Rho)
		}
		// Bounds.
		if r.Rho < -1 || r.Rho > 1 || r.P < 0 || r.P > 1 || r.N < 2 {
			t.Errorf("trial %d: ρ = %g, P = %g, N = %d out of range", trial, r.Rho, r.P, r.N)
		}
		if r.N >= 4 && !(r.Lo <= r.Rho && r.Rho <= r.Hi && r.Lo >= -1 && r.Hi <= 1) {
			t.Errorf("trial %d: CI [%g, %g] does not bracket ρ = %g within [−1, 1]", trial, r.Lo, r.Hi, r.Rho)
		}
		// Invariance under a strictly increasing transform (exp) of x.
		ex := make([]float64, n)
		neg := make([]float64, n)
		for i, v := range x {
			ex[i] = math.Exp(v)
			neg[i] = -v
		}
		if e := Spearman(ex, y); e.Rho != r.Rho {
			t.Errorf("trial %d: ρ(exp x, y) = %.17g, ρ(x, y) = %.17g (theoretical: rank invariant)", trial, e.Rho, r.Rho)
		}
		// Reversal flips the sign.
		if f := Spearman(neg, y); f.Rho != -r.Rho {
			t.Errorf("trial %d: ρ(−x, y) = %.17g, want %.17g (theoretical: sign flip)", trial, f.Rho, -r.Rho)
		}
	}
	// Theoretical: a strictly monotone relation gives |ρ| = 1 and P = 0.
	x := []float64{3, 1, 4, 1.5, 9, 2.6}
	y := []float64{30, 10, 40, 15, 90, 26}
	if r := Spearman(x, y); r.Rho != 1 || r.P != 0 {
		t.Errorf("Spearman of a monotone relation = %g (P %g), want 1 (P 0)", r.Rho, r.P)
	}
}

func TestSomersDProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	for trial := 0; trial < 200; trial++ {
		r, c := 2+rng.IntN(5), 2+rng.IntN(5)
		tab := make([]float64, r*c)
		for i := range tab {
			tab[i] = float64(rng.IntN(8))
		}
		res := SomersD(tab, r, c)
		if math.IsNaN(res.DYX) || math.IsNaN(res.DXY) {
			continue
		}
		// Transposing swaps the directions.
		tt := make([]float64, r*c)
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				tt[j*r+i] = tab[i*c+j]
			}
		}
		tr := SomersD(tt, c, r)
		if !near(tr.DYX, res.DXY, 1e-12) || !near(tr.DXY, res.DYX, 1e-12) || !near(tr.SEYX, res.SEXY, 1e-12) || !near(tr.P, res.P, 1e-12) {
			t.Errorf("trial %d: transpose gives %+v, want the directions of %+v swapped (theoretical)", trial, tr, res)
		}
		// Reversing the column order flips the sign of both directions.
		rev := make([]float64, r*c)
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				rev[i*c+(c-1-j)] = tab[i*c+j]
			}
		}
		rv := SomersD(rev, r, c)
		if !near(rv.DYX, -res.DYX, 1e-12) || !near(rv.DXY, -res.DXY, 1e-12) || !near(rv.SEYX, res.SEYX, 1e-12) {
			t.Errorf("trial %d: reversed columns give %g, %g, want %g, %g (theoretical)", trial, rv.DYX, rv.DXY, -res.DYX, -res.DXY)
		}
		// Bounds, and |d| ≤ 1 in both directions.
		if math.Abs(res.DYX) > 1 || math.Abs(res.DXY) > 1 || res.P < 0 || res.P > 1 || res.SEYX < 0 {
			t.Errorf("trial %d: out of range: %+v", trial, res)
		}
	}
}

func TestCramersVProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	for trial := 0; trial < 200; trial++ {
		r, c := 2+rng.IntN(5), 2+rng.IntN(5)
		tab := make([]float64, r*c)
		for i := range tab {
			tab[i] = float64(rng.IntN(10))
		}
		res := CramersV(tab, r, c)
		if math.IsNaN(res.V) {
			continue
		}
		tt := make([]float64, r*c)
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				tt[j*r+i] = tab[i*c+j]
			}
		}
		tr := CramersV(tt, c, r)
		if !near(tr.V, res.V, 1e-12) || !near(tr.VBC, res.VBC, 1e-12) || !near(tr.P, res.P, 1e-12) {
			t.Errorf("trial %d: V not symmetric: %+v vs %+v (theoretical)", trial, tr, res)
		}
		if res.V < 0 || res.V > 1 || res.VBC < 0 || res.VBC > 1 || res.P < 0 || res.P > 1 {
			t.Errorf("trial %d: out of range: %+v", trial, res)
		}
		// Bias correction only shrinks: Ṽ ≤ V (Bergsma 2013, hand-derived from the formula).
		if res.VBC > res.V+1e-12 {
			t.Errorf("trial %d: Ṽ = %g > V = %g", trial, res.VBC, res.V)
		}
	}
	// Theoretical: a perfect diagonal table has V = 1; an empty row is dropped.
	if res := CramersV([]float64{5, 0, 0, 0, 0, 0, 0, 0, 7}, 3, 3); !near(res.V, 1, 1e-15) || res.DF != 1 || res.R != 2 {
		t.Errorf("CramersV(diagonal with empty row) = %+v, want V 1, DF 1, R 2", res)
	}
}

func TestKruskalProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	for trial := 0; trial < 100; trial++ {
		n := 10 + rng.IntN(50)
		x := randData(rng, n, trial%3*3, 0.1)
		g := make([]int, n)
		for i := range g {
			g[i] = rng.IntN(4) - 1 // −1 is missing
		}
		res := KruskalWallis(x, g)
		if math.IsNaN(res.H) {
			continue
		}
		// Invariance under a strictly decreasing transform (−x): H uses ranks
		// only through squared rank sums around their mean.
		neg := make([]float64, n)
		for i := range x {
			neg[i] = -x[i]
		}
		if r2 := KruskalWallis(neg, g); !near(r2.H, res.H, 1e-12) {
			t.Errorf("trial %d: H(−x) = %g, H(x) = %g (theoretical: invariant)", trial, r2.H, res.H)
		}
		if res.EpsilonSq < 0 || res.EpsilonSq > 1 || res.P < 0 || res.P > 1 {
			t.Errorf("trial %d: out of range: %+v", trial, res)
		}
	}
}

func TestBenjaminiHochbergProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	p := make([]float64, 300)
	for i := range p {
		p[i] = rng.Float64() * rng.Float64()
	}
	q := BenjaminiHochberg(p, nil)
	for i := range p {
		if q[i] < p[i] || q[i] > 1 {
			t.Errorf("q[%d] = %g for p = %g: want p ≤ q ≤ 1", i, q[i], p[i])
		}
		for j := range p {
			if p[i] < p[j] && q[i] > q[j] {
				t.Fatalf("q not monotone in p: p %g→q %g, p %g→q %g", p[i], q[i], p[j], q[j])
			}
		}
	}
	// In place gives the same.
	cp := append([]float64(nil), p...)
	BenjaminiHochberg(cp, cp)
	for i := range q {
		if cp[i] != q[i] {
			t.Fatalf("in-place q[%d] = %g, want %g", i, cp[i], q[i])
		}
	}
}

func TestKernelPanics(t *testing.T) {
	for _, tc := range []struct {
		name string
		f    func()
		want string
	}{
		{"Spearman lengths", func() { Spearman([]float64{1}, []float64{1, 2}) }, "assoc: length mismatch"},
		{"KruskalWallis lengths", func() { KruskalWallis([]float64{1}, []int{0, 1}) }, "assoc: length mismatch"},
		{"Crosstab lengths", func() { Crosstab([]int{1}, nil) }, "assoc: length mismatch"},
		{"CramersV shape", func() { CramersV([]float64{1, 2, 3}, 2, 2) }, "assoc: table shape mismatch"},
		{"SomersD negative", func() { SomersD([]float64{1, -2, 3, 4}, 2, 2) }, "assoc: negative or non-finite count"},
		{"Phi NaN", func() { Phi(1, math.NaN(), 1, 1) }, "assoc: negative or non-finite count"},
		{"MissingPhi lengths", func() { MissingPhi([]bool{true}, nil) }, "assoc: length mismatch"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			defer func() {
				if r := recover(); r != tc.want {
					t.Errorf("panic %v, want %q", r, tc.want)
				}
			}()
			tc.f()
		})
	}
}

func TestKernelUndefined(t *testing.T) {
	nan := math.NaN()
	if r := Spearman([]float64{1, 2, nan}, []float64{nan, 3, 4}); !math.IsNaN(r.Rho) || r.N != 1 {
		t.Errorf("Spearman with one complete pair = %+v, want NaN, N 1", r)
	}
	if r := Spearman([]float64{1, 1, 1, 1}, []float64{1, 2, 3, 4}); !math.IsNaN(r.Rho) {
		t.Errorf("Spearman with constant x = %+v, want NaN", r)
	}
	if r := CramersV([]float64{3, 4, 0, 0}, 2, 2); !math.IsNaN(r.V) || r.R != 1 {
		t.Errorf("CramersV with one non-empty row = %+v, want NaN", r)
	}
	if r := SomersD([]float64{3, 4, 0, 0}, 2, 2); !math.IsNaN(r.DYX) || math.IsNaN(r.DXY) {
		t.Errorf("SomersD with one non-empty row = %+v, want d(Y|X) NaN (all tied on X), d(X|Y) defined", r)
	}
	if r := KruskalWallis([]float64{1, 2, 3}, []int{0, 0, 0}); !math.IsNaN(r.H) || r.K != 1 {
		t.Errorf("KruskalWallis with one group = %+v, want NaN", r)
	}
	if r := MissingPhi([]bool{true, true}, []bool{false, true}); !math.IsNaN(r.Phi) {
		t.Errorf("MissingPhi with x always missing = %+v, want NaN", r)
	}
	// Theoretical: missing together on exactly the same rows gives φ = 1.
	if r := MissingPhi([]bool{true, false, false, true}, []bool{true, false, false, true}); r.Phi != 1 {
		t.Errorf("MissingPhi of identical patterns = %g, want 1", r.Phi)
	}
}
