package prob

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// TestNoncentralChiSquaredReference compares with scipy.stats.ncx2.sf
// (scipy 1.10, Boost.Math), testdata/reference/ncx2.tsv, made by
// testdata/reference/gen_ncx2.py.
func TestNoncentralChiSquaredReference(t *testing.T) {
	f, err := os.Open("../testdata/reference/ncx2.tsv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	rows, worst := 0, 0.0
	for sc.Scan() {
		line := sc.Text()
		if strings.HasPrefix(line, "#") || line == "" {
			continue
		}
		v := strings.Split(line, "\t")
		var x [4]float64
		for i := range x {
			x[i], err = strconv.ParseFloat(v[i], 64)
			if err != nil {
				t.Fatal(err)
			}
		}
		got := NoncentralChiSquared{K: x[0], Lambda: x[1]}.Survival(x[2])
		rel := math.Abs(got-x[3]) / x[3]
		worst = math.Max(worst, rel)
		if rel > 1e-12 {
			t.Errorf("k %g λ %g x %g: %.15g, want %.15g (rel %.2g)", x[0], x[1], x[2], got, x[3], rel)
		}
		rows++
	}
	if rows < 200 {
		t.Fatalf("only %d reference rows", rows)
	}
	t.Logf("%d rows, worst relative error %.2g", rows, worst)
}

func TestNoncentralChiSquaredCentral(t *testing.T) {
	// λ = 0 is the central χ²: P(χ²_2 > x) = e^{−x/2} exactly.
	for _, x := range []float64{0.1, 1, 5, 30} {
		got := NoncentralChiSquared{K: 2}.Survival(x)
		if math.Abs(got-math.Exp(-x/2)) > 1e-15 {
			t.Errorf("x %g: %g, want %g", x, got, math.Exp(-x/2))
		}
	}
	if !math.IsNaN(NoncentralChiSquared{K: 0, Lambda: 1}.Survival(1)) {
		t.Error("K = 0 must give NaN")
	}
}
