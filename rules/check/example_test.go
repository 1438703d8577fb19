package check_test

import (
	"fmt"

	"github.com/crossform/crossform/rules/check"
)

// Seven violations out of 20 evaluations where the other sites run at 10%:
// the exact one-sided binomial p-value (R 4.2.2: binom.test(7, 20, 0.1,
// alternative = "greater")$p.value = 0.002386089408966128).
func ExampleBinomialUpperTail() {
	fmt.Printf("%.6f\n", check.BinomialUpperTail(7, 20, 0.1))
	// Output: 0.002386
}

// R 4.2.2: p.adjust(c(0.01, 0.04, 0.03, 0.005), "BH") = 0.02 0.04 0.04 0.02.
func ExampleBenjaminiHochberg() {
	fmt.Printf("%.2f\n", check.BenjaminiHochberg([]float64{0.01, 0.04, 0.03, 0.005}))
	// Output: [0.02 0.04 0.04 0.02]
}

func ExampleClassify() {
	f := func(key, v string) check.Finding {
		return check.Finding{Key: key, RuleID: "r", Vars: []string{"X"}, Values: []string{v}}
	}
	c := check.Classify(
		[]check.Finding{f("r|a", "1"), f("r|b", "5"), f("r|c", "2")},
		[]check.Finding{f("r|a", "1"), f("r|b", "4"), f("r|d", "9")})
	for _, x := range c.Current {
		fmt.Println(x.Key, x.Class, x.Changed)
	}
	fmt.Printf("%+v\n", c.Counts)
	// Output:
	// r|a persisting false
	// r|b persisting true
	// r|c new false
	// {New:1 Persisting:2 Changed:1 Resolved:1}
}
