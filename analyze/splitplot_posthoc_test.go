package analyze

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// TestSplitPlotTukeyReference compares with testdata/reference/
// splitplot_tukey.json (gen_splitplot_tukey.py: means in numpy, the SE of
// each kind of difference from Gomez and Gomez 1984, Table 3.8, with the
// statsmodels error mean squares, p from scipy.stats.studentized_range).
func TestSplitPlotTukeyReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/splitplot_tukey.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			Name string
			Sets []struct {
				Term, Within string
				Pairs        []struct {
					Pair       string
					Diff, Q, P float64
				}
			}
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	split := loadSplit(t)
	if len(ref.Cases) < 2 {
		t.Fatalf("%d cases; regenerate with gen_splitplot_tukey.py", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		var d SplitPlot
		for _, s := range split.Cases {
			if s.Name == c.Name {
				d = splitData(s.Data, s.Blocked)
			}
		}
		res, err := SplitPlotANOVA(d)
		if err != nil {
			t.Fatal(err)
		}
		phs, err := SplitPlotTukey(d, res, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		if len(phs) != len(c.Sets) {
			t.Fatalf("%s: %d sets, reference %d", c.Name, len(phs), len(c.Sets))
		}
		for k, w := range c.Sets {
			ph := phs[k]
			if ph.Term != w.Term || ph.Within != w.Within || len(ph.Pairs) != len(w.Pairs) {
				t.Fatalf("%s set %d: %s within %q, %d pairs; reference %s within %q, %d", c.Name, k, ph.Term, ph.Within, len(ph.Pairs), w.Term, w.Within, len(w.Pairs))
			}
			for i, wp := range w.Pairs {
				g := ph.Pairs[i]
				if g.Pair != wp.Pair || math.Abs(g.Diff-wp.Diff) > 1e-10 || math.Abs(g.Q-wp.Q) > 1e-9*wp.Q || math.Abs(g.P-wp.P) > 2e-8 {
					t.Errorf("%s %s %s: %s diff %.10g q %.10g p %.10g; reference %s %.10g %.10g %.10g", c.Name, w.Term, w.Within, g.Pair, g.Diff, g.Q, g.P, wp.Pair, wp.Diff, wp.Q, wp.P)
				}
			}
		}
	}
}
