package assoc

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/crossform/crossform/dataset"
)

// synthTable returns a seeded table of n rows and p variables: 60% continuous
// (a quarter of them rounded to one decimal, so tied), 15% ordinal (1–5),
// 15% nominal (3–6 levels), 10% binary, with each cell missing with
// probability miss. Variables are built from a few latent factors so that
// pairs are associated.
func synthTable(n, p int, miss float64, seed uint64) *dataset.Table {
	rng := rand.New(rand.NewPCG(seed, 2))
	t := dataset.NewTable("synth", n)
	const nf = 5
	f := make([][]float64, nf)
	for k := range f {
		f[k] = make([]float64, n)
		for i := range f[k] {
			f[k][i] = rng.NormFloat64()
		}
	}
	latent := func() []float64 {
		k := rng.IntN(nf)
		w := rng.Float64()*2 - 1
		v := make([]float64, n)
		for i := range v {
			v[i] = w*f[k][i] + rng.NormFloat64()
		}
		return v
	}
	for j := 0; j < p; j++ {
		name := fmt.Sprintf("V%04d", j)
		v := latent()
		frac := float64(j%20) / 20
		var c *dataset.Column
		switch {
		case frac < 0.60:
			if j%4 == 0 {
				for i := range v {
					v[i] = math.Round(v[i]*10) / 10
				}
			}
			for i := range v {
				if rng.Float64() < miss {
					v[i] = math.NaN()
				}
			}
			c = dataset.NewFloatColumn(name, dataset.Continuous, v)
		case frac < 0.75:
			for i := range v {
				v[i] = math.Max(1, math.Min(5, math.Round(v[i]+3)))
				if rng.Float64() < miss {
					v[i] = math.NaN()
				}
			}
			c = dataset.NewFloatColumn(name, dataset.Ordinal, v)
		case frac < 0.90:
			L := 3 + j%4
			codes := make([]int32, n)
			levels := make([]string, L)
			for l := range levels {
				levels[l] = string(rune('A' + l))
			}
			for i := range codes {
				codes[i] = int32(math.Max(0, math.Min(float64(L-1), math.Floor(v[i]+float64(L)/2))))
				if rng.Float64() < miss {
					codes[i] = -1
				}
			}
			c = dataset.NewCodeColumn(name, dataset.Nominal, codes, levels)
		default:
			codes := make([]int32, n)
			for i := range codes {
				if v[i] > 0 {
					codes[i] = 1
				}
				if rng.Float64() < miss {
					codes[i] = -1
				}
			}
			c = dataset.NewCodeColumn(name, dataset.Binary, codes, []string{"N", "Y"})
		}
		if err := t.Add(c); err != nil {
			panic(err)
		}
	}
	return t
}

// patternTable returns synthTable(n, p, 0, seed) with structured missingness,
// so that every re-ranking path of the engine is taken: columns j%4 == 0 have
// no missing values, j%4 == 1 share one missing pattern (a skipped visit),
// j%4 == 2 have that pattern plus a few more missing rows (a superset), and
// j%4 == 3 miss 15% of rows at random.
func patternTable(n, p int, seed uint64) *dataset.Table {
	src := synthTable(n, p, 0, seed)
	rng := rand.New(rand.NewPCG(seed, 9))
	shared := make([]bool, n)
	for i := range shared {
		shared[i] = rng.Float64() < 0.2
	}
	t := dataset.NewTable("pattern", n)
	for j, c := range src.Cols {
		miss := func(i int) bool {
			switch j % 4 {
			case 1:
				return shared[i]
			case 2:
				return shared[i] || rng.Float64() < 0.05
			case 3:
				return rng.Float64() < 0.15
			}
			return false
		}
		var out *dataset.Column
		if c.Storage == dataset.StoreCode {
			codes := append([]int32(nil), c.Codes...)
			for i := range codes {
				if miss(i) {
					codes[i] = -1
				}
			}
			out = dataset.NewCodeColumn(c.Name, c.Type, codes, c.Levels)
		} else {
			v := append([]float64(nil), c.Floats...)
			for i := range v {
				if miss(i) {
					v[i] = math.NaN()
				}
			}
			out = dataset.NewFloatColumn(c.Name, c.Type, v)
		}
		if err := t.Add(out); err != nil {
			panic(err)
		}
	}
	return t
}
