package signals_test

import (
	"fmt"
	"math"

	"github.com/crossform/crossform/signals"
)

// Gower distance of three subjects on age, sex and a severity grade, as R's
// cluster::daisy(metric = "gower") defines it (Range scaling): subjects 1 and 2
// differ by 10 of a 40-year age range and in sex; the grade is missing for
// subject 2, so that pair uses two variables.
func ExampleNewGower() {
	m := &signals.Mixed{
		Names: []string{"AGE", "SEX", "GRADE"},
		Kinds: []signals.Kind{signals.Numeric, signals.SymmetricBinary, signals.Ordinal},
		Cols: [][]float64{
			{30, 40, 70},
			{0, 1, 0},
			{0, math.NaN(), 2},
		},
	}
	g, err := signals.NewGower(m, signals.Range)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%.4f %.4f %.4f\n", g.Dist(0, 1), g.Dist(0, 2), g.Dist(1, 2))
	// Output: 0.6250 0.6667 0.8750
}
