package analyze

import (
	"encoding/json"
	"math"
	"os"
	"strconv"
	"testing"

	"github.com/allotproject/allot/column"
)

// TestLatinSquareReference compares with testdata/reference/latin.json
// (gen_latin.py: statsmodels OLS/anova_lm and nested fits).
func TestLatinSquareReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/latin.json")
	if err != nil {
		t.Fatal(err)
	}
	type stat struct {
		DF       int
		SS, F, P float64
	}
	var ref struct {
		Cases []struct {
			Name   string
			Series bool
			Data   struct{ Y, Row, Col, Trt, Sq []string }
			Expect map[string]json.RawMessage
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range ref.Cases {
		t.Run(c.Name, func(t *testing.T) {
			d := LatinData{Response: "y", Values: c.Data.Y, Row: Column{Name: "row", Values: column.Of(c.Data.Row)},
				Col: Column{Name: "column", Values: column.Of(c.Data.Col)}, Treatment: Column{Name: "trt", Values: column.Of(c.Data.Trt)}}
			if c.Series {
				d.Square = &Column{Name: "square", Values: column.Of(c.Data.Sq)}
			}
			r, err := LatinSquareANOVA(d)
			if err != nil {
				t.Fatal(err)
			}
			var residDF int
			var residSS float64
			json.Unmarshal(c.Expect["resid_df"], &residDF)
			json.Unmarshal(c.Expect["resid_ss"], &residSS)
			if r.Residual.DF != residDF {
				t.Errorf("residual df %d, want %d", r.Residual.DF, residDF)
			}
			refNear(t, "residual SS", r.Residual.SS, residSS, 1e-10)
			names := map[string]string{"row": "row", "col": "column", "trt": "trt", "sq": "square"}
			if c.Series {
				names["row"], names["col"] = "row within square", "column within square"
			}
			got := map[string]Term{}
			for _, tm := range r.Terms {
				got[tm.Source] = tm
			}
			for k, name := range names {
				raw, ok := c.Expect[k]
				if !ok {
					continue
				}
				var w stat
				if err := json.Unmarshal(raw, &w); err != nil {
					t.Fatal(err)
				}
				g := got[name]
				if g.DF != w.DF {
					t.Errorf("%s df %d, want %d", name, g.DF, w.DF)
				}
				refNear(t, name+" SS", g.SS, w.SS, 1e-9)
				refNear(t, name+" F", g.F, w.F, 1e-9)
				refNear(t, name+" p", g.P, w.P, 1e-8)
			}
		})
	}
}

// TestLatinMeansReference: in complete squares the treatment means are the
// least-squares means, with SE sqrt(MS_residual/n) and t on the residual df
// (testdata/reference/latin.json, "trt_lsmeans": statsmodels design rows
// averaged over the rows and columns, cov_params, scipy t). With empty
// cells the raw means are not the LS means; LatinMeans fits the additive
// model for them.
func TestLatinMeansReference(t *testing.T) {
	for _, c := range loadLatinRef(t) {
		t.Run(c.Name, func(t *testing.T) {
			_, r, gs := c.fit(t)
			if len(gs) != len(c.Expect.LSMeans) {
				t.Fatalf("%d treatments, want %d", len(gs), len(c.Expect.LSMeans))
			}
			byName := map[string]Group{}
			for _, g := range gs {
				byName[g.Level] = g
			}
			adjusted := 0 // treatments whose LS mean differs from the raw mean
			for _, w := range c.Expect.LSMeans {
				g := byName[w.Trt]
				refNear(t, w.Trt+" mean", g.LSMean, w.Mean, 1e-10)
				if r.Missing == 0 {
					refNear(t, w.Trt+" raw mean", g.Mean, w.Mean, 1e-10)
				} else if math.Abs(g.Mean-w.Mean) > 1e-6 {
					adjusted++
				}
				refNear(t, w.Trt+" SE", g.SE, w.SE, 1e-9)
				refNear(t, w.Trt+" upper limit", g.Upper, w.Mean+w.T975*w.SE, 1e-9)
			}
			if r.Missing > 0 && adjusted == 0 {
				t.Error("with cells missing no LS mean differs from its raw mean: the case does not test the adjustment")
			}
		})
	}
}

// TestLatinTukeyReference: Tukey HSD of the treatments on the residual mean
// square (testdata/reference/latin.json, "tukey": differences of the
// statsmodels LS means, their SEs from cov_params, q, and p and the 95%
// critical q from scipy's studentized range), in complete squares and with
// cells missing (Tukey–Kramer on the LS means).
func TestLatinTukeyReference(t *testing.T) {
	for _, c := range loadLatinRef(t) {
		t.Run(c.Name, func(t *testing.T) {
			d, r, means := c.fit(t)
			ph, err := LatinTukey(d, r, means, 0.05)
			if err != nil || ph == nil {
				t.Fatalf("no comparisons: %v", err)
			}
			byPair := map[[2]string]Comparison{}
			for _, p := range ph.Pairs {
				byPair[[2]string{p.A, p.B}] = p
			}
			if len(ph.Pairs) != len(c.Expect.Tukey) {
				t.Fatalf("%d pairs, want %d", len(ph.Pairs), len(c.Expect.Tukey))
			}
			for _, w := range c.Expect.Tukey {
				p, ok := byPair[[2]string{w.A, w.B}]
				sign := 1.0
				if !ok {
					p, ok = byPair[[2]string{w.B, w.A}]
					sign = -1
				}
				if !ok {
					t.Fatalf("no pair %s, %s", w.A, w.B)
				}
				refNear(t, w.A+"−"+w.B+" difference", sign*p.Diff, w.Diff, 1e-10)
				refNear(t, w.A+"−"+w.B+" SE", p.SE, w.SE, 1e-9)
				refNear(t, w.A+"−"+w.B+" q", p.Q, w.Q, 1e-9)
				refNear(t, w.A+"−"+w.B+" p", p.P, w.P, 1e-8)
				refNear(t, "critical q", ph.Crit, w.Crit, 1e-8)
			}
		})
	}
}

// TestLatinChecksReference: the residual checks of a Latin square against
// testdata/reference/latin.json ("checks": the statsmodels OLS residuals and
// externally studentized residuals, scipy's Shapiro–Wilk on the
// residuals), on a square, a square with two cells missing and a series.
func TestLatinChecksReference(t *testing.T) {
	flagged := 0
	for _, c := range loadLatinRef(t) {
		t.Run(c.Name, func(t *testing.T) {
			d, r, means := c.fit(t)
			a := LatinChecks(d, r, means, 0.05)
			w := c.Expect.Checks
			flagged += checkResiduals(t, a, w.W, w.P, w.Resid, w.Deleted)
		})
	}
	if flagged == 0 {
		t.Error("no case flags a unit: the outlier check is not tested")
	}
}

// latinRef is a case of testdata/reference/latin.json (gen_latin.py) with
// the expected values the means, Tukey and checks tests read.
type latinRef struct {
	Name   string
	Series bool
	Data   struct{ Y, Row, Col, Trt, Sq []string }
	Expect struct {
		LSMeans []struct {
			Trt            string
			Mean, SE, T975 float64
		} `json:"trt_lsmeans"`
		Tukey []struct {
			A, B                 string
			Diff, SE, Q, P, Crit float64
		}
		Checks struct {
			Resid, Deleted []float64
			W              float64 `json:"shapiro_w"`
			P              float64 `json:"shapiro_p"`
		}
	}
}

func loadLatinRef(t *testing.T) []latinRef {
	t.Helper()
	b, err := os.ReadFile("../testdata/reference/latin.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct{ Cases []latinRef }
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	return ref.Cases
}

// fit returns the case's data (units u0, u1, …) and its Latin-square ANOVA
// and treatment means.
func (c latinRef) fit(t *testing.T) (LatinData, *LatinResult, []Group) {
	t.Helper()
	d := LatinData{Response: "y", Values: c.Data.Y, Row: Column{Name: "row", Values: column.Of(c.Data.Row)},
		Col: Column{Name: "column", Values: column.Of(c.Data.Col)}, Treatment: Column{Name: "trt", Values: column.Of(c.Data.Trt)}}
	for i := range c.Data.Y {
		d.Units = append(d.Units, "u"+strconv.Itoa(i))
	}
	if c.Series {
		d.Square = &Column{Name: "square", Values: column.Of(c.Data.Sq)}
	}
	r, err := LatinSquareANOVA(d)
	if err != nil {
		t.Fatal(err)
	}
	means, err := LatinMeans(d, r)
	if err != nil {
		t.Fatal(err)
	}
	return d, r, means
}

// checkResiduals compares residual checks whose units are named u0, u1, …
// with the reference: Shapiro–Wilk W and p (scipy, single precision: see
// TestAssumptionsAgainstScipy), and the units flagged beyond ±3 with their
// externally studentized residuals and residuals (statsmodels). It returns
// the number of units flagged.
func checkResiduals(t *testing.T, a Assumptions, w, p float64, resid, deleted []float64) int {
	t.Helper()
	if !a.NormalOK || math.Abs(a.ShapiroW-w) > 5e-6 || math.Abs(a.ShapiroP-p) > 1e-3 {
		t.Errorf("Shapiro–Wilk W %.7f p %.5f; scipy %.7f %.5f (%v)", a.ShapiroW, a.ShapiroP, w, p, a.Verdicts)
	}
	want := map[string]float64{}
	for i, del := range deleted {
		if math.Abs(del) > 3 {
			want["u"+strconv.Itoa(i)] = del
		}
	}
	if len(a.Outliers) != len(want) {
		t.Fatalf("%d units flagged, statsmodels %d (%v)", len(a.Outliers), len(want), want)
	}
	for _, o := range a.Outliers {
		refNear(t, o.Unit+" studentized", o.Studentized, want[o.Unit], 1e-8)
		i, _ := strconv.Atoi(o.Unit[1:])
		refNear(t, o.Unit+" residual", o.Residual, resid[i], 1e-9)
	}
	return len(a.Outliers)
}
