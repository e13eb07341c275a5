package analyze_test

import (
	"fmt"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/column"
)

// A one-way ANOVA of three groups of three.
func ExampleFit() {
	d := analyze.Data{
		Response: "y",
		Values:   column.Of([]string{"4.1", "3.9", "4.3", "5.0", "5.2", "4.9", "6.1", "5.8", "6.3"}),
		Factors:  []analyze.Column{{Name: "dose", Values: column.Of([]string{"0", "0", "0", "1", "1", "1", "2", "2", "2"})}},
	}
	t, err := analyze.Fit(d, analyze.Options{})
	if err != nil {
		panic(err)
	}
	term := t.Terms[0]
	fmt.Printf("%s: df %d, SS %.4f, F %.2f, p %.2g; residual df %d\n", term.Source, term.DF, term.SS, term.F, term.P, t.Residual.DF)
	// (By hand: group means 4.1, 5.0333, 6.0667; between SS 3·Σ(mean − 5.0667)² = 5.8067;
	// within SS 0.08 + 0.04667 + 0.12667 = 0.25333 on 6 df; F = 2.9033/0.042222 = 68.76.)

	// Output: dose: df 2, SS 5.8067, F 68.76, p 7.3e-05; residual df 6
}
