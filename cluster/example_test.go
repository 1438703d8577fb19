package cluster_test

import (
	"fmt"
	"math"

	"github.com/crossform/crossform/cluster"
)

func ExampleHierarchy() {
	// Hand-made strengths: SYSBP and DIABP are strongly related, AGE weakly to both; the
	// strength of AGE and SEX is unknown (NaN), which counts as no relation.
	nan := math.NaN()
	in := cluster.Input{
		Names:  []string{"AGE", "DIABP", "SEX", "SYSBP"},
		Groups: []string{"DM", "VS", "DM", "VS"},
		Strength: []float64{
			1, 0.4, nan, 0.3,
			0.4, 1, 0.1, 0.8,
			nan, 0.1, 1, 0.0,
			0.3, 0.8, 0.0, 1,
		},
	}
	tree, err := cluster.Hierarchy(in, cluster.Average)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, m := range tree.Merges {
		fmt.Printf("%d+%d at %.2f (%d variables)\n", m.A, m.B, m.Height, m.Size)
	}
	part := cluster.Summarize(in, tree.CutStrength(cluster.DefaultMinStrength), 2)
	for _, c := range part.Clusters {
		fmt.Printf("cluster %d: %v, cohesion %.3f\n", c.ID, c.Members, c.Cohesion)
	}
	fmt.Println("singletons:", part.Singletons)
	// Output:
	// 1+3 at 0.20 (2 variables)
	// 0+4 at 0.65 (3 variables)
	// 2+5 at 0.97 (4 variables)
	// cluster 1: [{0 AGE DM} {1 DIABP VS} {3 SYSBP VS}], cohesion 0.500
	// singletons: [{2 SEX DM}]
}
