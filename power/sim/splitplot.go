package sim

import (
	"context"
	"fmt"
	"strconv"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/randomize"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

// splitStream offsets the PCG streams of split-plot data sets.
const splitStream = 1 << 37

// SplitPlotSpec is a Monte-Carlo power question for a split plot: the plan
// (cell means, main-plot and sub-plot SDs), R replicates, and sub-plots lost
// at random.
type SplitPlotSpec struct {
	Plan    power.SplitPlotPlan
	R       int
	Dropout float64
	Sims    int
	Seed    uint64
}

// RunSplitPlot simulates s.Sims split plots and analyses each as allot
// analyze would: the two-stratum ANOVA when every sub-plot is present, the
// REML mixed model (random main plots, Satterthwaite df) when some are
// lost. Data set i uses PCG stream randomize.Stream(seed, 2^37 + i).
// Result.Terms holds the whole-plot, sub-plot and interaction tests.
func RunSplitPlot(ctx context.Context, s SplitPlotSpec) (Result, error) {
	if err := s.Plan.Validate(); err != nil {
		return Result{}, err
	}
	if s.R < 2 || s.Sims < 1 || !(s.Dropout >= 0 && s.Dropout < 1) {
		return Result{}, fmt.Errorf("split-plot simulation: need at least 2 replicates, 1 data set and a dropout in [0, 1)")
	}
	p := s.Plan
	hits := make([]int, 3)
	var res Result
	var lost int
	for i := 0; i < s.Sims; i++ {
		if ctx.Err() != nil {
			res.Cancelled = true
			break
		}
		r := rand.New(randomize.Stream(s.Seed, splitStream+uint64(i)))
		d := analyze.SplitPlot{Response: "simulated", Whole: analyze.Column{Name: "A"}, Sub: analyze.Column{Name: "B"}, MainPlot: analyze.Column{Name: "main plot"}}
		var blk analyze.Column
		mp := 0
		missing := false
		for rep := 0; rep < s.R; rep++ {
			for a := 0; a < p.A; a++ {
				mp++
				me := p.SDMain * r.NormFloat64()
				for b := 0; b < p.B; b++ {
					y := p.Means[a*p.B+b] + me + p.SDSub*r.NormFloat64()
					if s.Dropout > 0 && r.Float64() < s.Dropout {
						lost++
						missing = true
						continue
					}
					d.Values = append(d.Values, strconv.FormatFloat(y, 'g', -1, 64))
					d.Whole.Values = d.Whole.Values.Append(strconv.Itoa(a))
					d.Sub.Values = d.Sub.Values.Append(strconv.Itoa(b))
					d.MainPlot.Values = d.MainPlot.Values.Append(strconv.Itoa(mp))
					blk.Values = blk.Values.Append(strconv.Itoa(rep))
				}
			}
		}
		if p.Blocked {
			blk.Name = "block"
			d.Block = &blk
		}
		res.Sims++
		ps, err := splitPlotP(d, missing)
		if err != nil {
			res.Failed++
			continue
		}
		for k, pv := range ps {
			if pv < p.Alpha {
				hits[k]++
			}
		}
	}
	if res.Sims == 0 {
		return res, nil
	}
	res.MeanLost = float64(lost) / float64(res.Sims)
	for k, t := range p.Evaluate(s.R) {
		res.Terms = append(res.Terms, estimate("test of "+t.Term, hits[k], res.Sims))
	}
	return res, nil
}

// splitPlotP returns the p-values of the whole-plot, sub-plot and
// interaction tests.
func splitPlotP(d analyze.SplitPlot, missing bool) ([3]float64, error) {
	var out [3]float64
	if !missing {
		t, err := analyze.SplitPlotANOVA(d)
		if err != nil {
			return out, err
		}
		k := 0
		for _, tm := range t.Terms {
			if tm.IsError || d.Block != nil && tm.Source == d.Block.Name {
				continue
			}
			out[k] = tm.P
			k++
		}
		return out, nil
	}
	t, err := analyze.SplitPlotREML(d)
	if err != nil {
		return out, err
	}
	k := 0
	for _, tm := range t.Terms {
		if d.Block != nil && tm.Source == d.Block.Name {
			continue
		}
		out[k] = tm.P
		k++
	}
	return out, nil
}
