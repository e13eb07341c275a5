package design

import (
	"fmt"
	"testing"
)

// BenchmarkResolveUnitList resolves a unit list in blocks (a block column):
// the grouping, the equal-blocks check and the validation are linear in the
// number of units.
func BenchmarkResolveUnitList(b *testing.B) {
	for _, n := range []int{10_000, 100_000} {
		b.Run(fmt.Sprintf("units=%d", n), func(b *testing.B) {
			rows := make([]UnitRow, n)
			for i := range rows {
				rows[i] = UnitRow{ID: fmt.Sprintf("A%d", i), Block: fmt.Sprintf("L%d", i%(n/5))}
			}
			s := Spec{Factor: []string{"dose=5"}, BlockColumn: "litter", Seed: u64(1)}
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if _, err := s.Resolve(rows); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
