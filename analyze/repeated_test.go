package analyze

import (
	"encoding/json"
	"os"
	"testing"
)

// TestRepeatedReference compares with testdata/reference/repeated.json
// (gen_repeated.py: statsmodels OLS/anova_lm and AnovaRM, and numpy from the
// published sphericity formulas).
func TestRepeatedReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/repeated.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			Name       string
			Times      []string
			TimeValues []float64 `json:"time_values"`
			Units      []string
			Groups     []string
			Values     [][]string
			Missing    []string
			Expect     struct {
				SS           map[string]float64
				DF           map[string]float64
				FTrt         *float64                            `json:"f_trt"`
				PTrt         *float64                            `json:"p_trt"`
				FTrtTime     *float64                            `json:"f_trt_time"`
				FTime        float64                             `json:"f_time"`
				MauchlyW     float64                             `json:"mauchly_w"`
				MauchlyX2    float64                             `json:"mauchly_chisq"`
				MauchlyDF    int                                 `json:"mauchly_df"`
				MauchlyP     float64                             `json:"mauchly_p"`
				EpsGG        float64                             `json:"eps_gg"`
				EpsHF        float64                             `json:"eps_hf"`
				PTimeGG      float64                             `json:"p_time_gg"`
				PTimeHF      float64                             `json:"p_time_hf"`
				AnovaRMFTime *float64                            `json:"anovarm_f_time"`
				PerTime      []struct{ Diff, SE, DF, P float64 } `json:"per_time"`
				Summary      map[string][]float64
			}
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range ref.Cases {
		t.Run(c.Name, func(t *testing.T) {
			r := Repeated{Response: "weight", Times: c.Times, TimeValues: c.TimeValues, Treatment: "diet", Units: c.Units, Groups: c.Groups, Values: c.Values}
			res, err := SplitPlotInTime(r, 0.05)
			if err != nil {
				t.Fatal(err)
			}
			if len(res.Dropped) != len(c.Missing) {
				t.Fatalf("dropped %v, want %v", res.Dropped, c.Missing)
			}
			terms := map[string]RMTerm{}
			for _, tm := range res.Terms {
				terms[tm.Source] = tm
			}
			e := c.Expect
			key := map[string]string{"trt": "diet", "units": "units within diet", "time": "time", "trt_time": "diet × time", "resid": "residual within units"}
			for k, ss := range e.SS {
				tm, ok := terms[key[k]]
				if !ok {
					t.Fatalf("no row %q", key[k])
				}
				refNear(t, k+" SS", tm.SS, ss, 1e-9)
				if tm.DF != e.DF[k] {
					t.Errorf("%s df %g, want %g", k, tm.DF, e.DF[k])
				}
			}
			refNear(t, "F time", terms["time"].F, e.FTime, 1e-9)
			if e.AnovaRMFTime != nil {
				refNear(t, "F time (AnovaRM)", terms["time"].F, *e.AnovaRMFTime, 1e-9)
			}
			if e.FTrt != nil {
				refNear(t, "F diet", terms["diet"].F, *e.FTrt, 1e-9)
				refNear(t, "p diet", terms["diet"].P, *e.PTrt, 1e-8)
				refNear(t, "F diet × time", terms["diet × time"].F, *e.FTrtTime, 1e-9)
			}
			refNear(t, "Mauchly W", res.MauchlyW, e.MauchlyW, 1e-9)
			refNear(t, "Mauchly chi2", res.MauchlyX2, e.MauchlyX2, 1e-9)
			refNear(t, "Mauchly p", res.MauchlyP, e.MauchlyP, 1e-8)
			if res.MauchlyDF != e.MauchlyDF {
				t.Errorf("Mauchly df %d, want %d", res.MauchlyDF, e.MauchlyDF)
			}
			refNear(t, "GG epsilon", res.EpsGG, e.EpsGG, 1e-10)
			refNear(t, "HF epsilon", res.EpsHF, e.EpsHF, 1e-10)
			refNear(t, "p time GG", terms["time"].PGG, e.PTimeGG, 1e-8)
			refNear(t, "p time HF", terms["time"].PHF, e.PTimeHF, 1e-8)
			i := 0
			for _, per := range res.PerTime {
				for _, pt := range per {
					w := e.PerTime[i]
					refNear(t, pt.Pair+" diff", pt.Estimate, w.Diff, 1e-10)
					refNear(t, pt.Pair+" SE", pt.SE, w.SE, 1e-10)
					refNear(t, pt.Pair+" df", pt.DF, w.DF, 1e-10)
					if d := pt.P - w.P; d > 1e-7 || d < -1e-7 {
						t.Errorf("%s p %.10g, want %.10g", pt.Pair, pt.P, w.P)
					}
					i++
				}
			}
			missing := map[string]bool{}
			for _, m := range c.Missing {
				missing[m] = true
			}
			for kind, want := range e.Summary {
				d, _, err := Summarise(r, kind)
				if err != nil {
					t.Fatal(err)
				}
				j := 0
				for u, id := range d.Units.Strings() {
					if missing[id] {
						continue
					}
					got := parseAll(t, d.Values.Slice(u, u+1).Strings())[0]
					refNear(t, kind+" of "+id, got, want[j], 1e-10)
					j++
				}
				if j != len(want) {
					t.Errorf("%s: %d units, want %d", kind, j, len(want))
				}
			}
		})
	}
}

func TestSummariseDropsWhatItCannotUse(t *testing.T) {
	r := Repeated{Response: "h", Times: []string{"a", "b", "c"}, TimeValues: []float64{0, 1, 2}, Treatment: "t",
		Units: []string{"1", "2"}, Groups: []string{"x", "y"}, Values: [][]string{{"1", "2", ""}, {"", "", "3"}}}
	_, dropped, err := Summarise(r, SummaryFinal)
	if err != nil || len(dropped) != 1 || dropped[0] != "1" {
		t.Fatalf("final: dropped %v, %v", dropped, err)
	}
	_, dropped, _ = Summarise(r, SummarySlope)
	if len(dropped) != 1 || dropped[0] != "2" {
		t.Fatalf("slope: dropped %v", dropped)
	}
	_, dropped, _ = Summarise(r, SummaryAUC)
	if len(dropped) != 2 {
		t.Fatalf("auc: dropped %v", dropped)
	}
}
