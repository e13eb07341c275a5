package analyze

import (
	"fmt"
	"strconv"
	"testing"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

func benchData(n int, levels []int, blocks int) Data {
	r := rand.New(rand.NewSource(1))
	d := Data{Response: "y"}
	for i := range levels {
		d.Factors = append(d.Factors, Column{Name: fmt.Sprintf("f%d", i)})
	}
	var b Column
	if blocks > 0 {
		b.Name = "block"
	}
	for i := 0; i < n; i++ {
		for k, l := range levels {
			d.Factors[k].Values = d.Factors[k].Values.Append(strconv.Itoa((i / (k + 1)) % l))
		}
		if blocks > 0 {
			b.Values = b.Values.Append(strconv.Itoa(i % blocks))
		}
		d.Values = d.Values.Append(strconv.FormatFloat(100+r.NormFloat64(), 'f', 2, 64))
	}
	if blocks > 0 {
		d.Block = &b
	}
	return d
}

func BenchmarkOneWay1e6(b *testing.B) {
	d := benchData(1_000_000, []int{6}, 0)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Fit(d, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFactorialBlocks1e5TypeIII(b *testing.B) {
	d := benchData(100_000, []int{3, 4, 2}, 5)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Fit(d, Options{SSType: 3}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkTukeyK10(b *testing.B) {
	d := benchData(200, []int{10}, 0)
	t, err := Fit(d, Options{})
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Tukey(d, t, 0); err != nil {
			b.Fatal(err)
		}
	}
}
