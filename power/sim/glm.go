package sim

import (
	"context"
	"fmt"
	"math"
	"strconv"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
	"gonum.org/v1/gonum/stat/distuv"
)

// glmStream offsets the PCG streams of GLM data sets from the other uses of
// the seed.
const glmStream = 1 << 36

// GLMSpec is a Monte-Carlo power question for a count or proportion
// response: the layout, the treatment means, the variation beyond the
// binomial or Poisson, losses, and the GLM analysis that allot analyze
// runs on such a response.
type GLMSpec struct {
	Layout design.Layout
	// Family is analyze.FamilyBinomial (Means are probabilities, Trials
	// per unit) or analyze.FamilyPoisson (Means are mean counts per unit).
	Family string
	Means  []float64
	Trials int
	// BlockSD is the SD of block effects on the link scale (logit or log).
	BlockSD float64
	// Overdispersion is the variation between units beyond the family:
	// for the binomial the intra-unit correlation ρ of a beta-binomial
	// (variance m p (1 − p)(1 + (m − 1)ρ)); for the Poisson φ of a
	// negative binomial (variance μ + φ μ²). 0 means none.
	Overdispersion float64
	Dropout        float64
	Alpha          float64
	Sims           int
	Seed           uint64
}

func (s GLMSpec) validate() error {
	nt := len(s.Layout.Plan.Treatments())
	switch {
	case len(s.Means) != nt:
		return fmt.Errorf("%d means for %d treatments: give one per treatment", len(s.Means), nt)
	case s.Sims < 1:
		return fmt.Errorf("%d simulations: give at least 1", s.Sims)
	case !(s.Dropout >= 0 && s.Dropout < 1):
		return fmt.Errorf("dropout %g: must be from 0 up to (not including) 1", s.Dropout)
	case !(s.Alpha > 0 && s.Alpha < 1):
		return fmt.Errorf("alpha %g: must be between 0 and 1", s.Alpha)
	case !(s.BlockSD >= 0) || math.IsInf(s.BlockSD, 0):
		return fmt.Errorf("block SD %g: must be 0 or more", s.BlockSD)
	case !(s.Overdispersion >= 0) || math.IsInf(s.Overdispersion, 0):
		return fmt.Errorf("overdispersion %g: must be 0 or more", s.Overdispersion)
	}
	switch s.Family {
	case analyze.FamilyBinomial:
		if s.Trials < 1 {
			return fmt.Errorf("%d trials per unit: must be 1 or more", s.Trials)
		}
		if s.Overdispersion >= 1 {
			return fmt.Errorf("intra-unit correlation %g: must be below 1", s.Overdispersion)
		}
		for _, m := range s.Means {
			if !(m > 0 && m < 1) {
				return fmt.Errorf("proportion %g: must be strictly between 0 and 1", m)
			}
		}
	case analyze.FamilyPoisson:
		for _, m := range s.Means {
			if !(m > 0) || math.IsInf(m, 0) {
				return fmt.Errorf("mean count %g: must be above 0", m)
			}
		}
	default:
		return fmt.Errorf("family %q: must be binomial or poisson", s.Family)
	}
	return nil
}

// RunGLM simulates s.Sims data sets and analyses each with analyze.FitGLM
// (Type 3 likelihood-ratio tests), counting the rejections of each term at
// s.Alpha twice: by the likelihood-ratio χ² test, and as allot analyze
// reports it (the quasi-likelihood F test when the Pearson dispersion
// exceeds 1). Result.Terms holds the two estimates of each term in that
// order. The second is lower when units vary little beyond the family: the
// F test then spends power on estimating a dispersion that is not there. Data set i uses its own PCG stream
// (randomize.Stream(seed, 2^36 + i)), so results do not depend on the
// order of evaluation. Each unit's response: block effect b ~ N(0, BlockSD²)
// added on the link scale; binomial successes from a beta-binomial with the
// unit's probability and intra-unit correlation ρ (a beta draw with
// α + β = (1 − ρ)/ρ, then a binomial), or a Poisson count whose mean is
// multiplied by a gamma variable of mean 1 and variance φ (a negative
// binomial). Data sets that cannot be analysed (a treatment or block lost,
// a singular fit) count as not rejecting and are reported in Failed.
func RunGLM(ctx context.Context, s GLMSpec) (Result, error) {
	if err := s.validate(); err != nil {
		return Result{}, err
	}
	base := designData(s.Layout)
	base.Response = "simulated"
	nb := 0
	for _, u := range s.Layout.Units {
		nb = max(nb, u.Block)
	}
	var names []string
	var total counts
	res := Result{}
	for i := 0; i < s.Sims; i++ {
		if ctx.Err() != nil {
			res.Cancelled = true
			break
		}
		r := rand.New(randomize.Stream(s.Seed, glmStream+uint64(i)))
		blocks := make([]float64, nb+1)
		for b := range blocks {
			blocks[b] = s.BlockSD * r.NormFloat64()
		}
		d, trials, lost := s.draw(base, blocks, r)
		total.n++
		total.lost += lost
		fit, err := analyze.FitGLM(d, analyze.GLMOptions{Family: s.Family, Trials: trials, PostHoc: analyze.MethodNone})
		if err != nil {
			total.failed++
			continue
		}
		if names == nil {
			for _, t := range fit.Terms {
				names = append(names, t.Source)
			}
			total.terms = make([]int, 2*len(names))
		}
		for k, t := range fit.Terms {
			if k >= len(names) {
				break
			}
			if t.P < s.Alpha {
				total.terms[2*k]++
			}
			p := t.P
			if fit.Quasi {
				p = t.PF
			}
			if p < s.Alpha {
				total.terms[2*k+1]++
			}
		}
	}
	res.Sims, res.Failed = total.n, total.failed
	if total.n == 0 {
		return res, nil
	}
	res.MeanLost = float64(total.lost) / float64(total.n)
	for k, name := range names {
		res.Terms = append(res.Terms,
			estimate(name+": χ² test", total.terms[2*k], total.n),
			estimate(name+": as analysed", total.terms[2*k+1], total.n))
	}
	return res, nil
}

// draw simulates one data set: the kept units' responses and trials.
func (s GLMSpec) draw(base analyze.Data, blocks []float64, r *rand.Rand) (analyze.Data, []float64, int) {
	d := analyze.Data{Response: base.Response}
	for _, f := range base.Factors {
		d.Factors = append(d.Factors, analyze.Column{Name: f.Name, Levels: f.Levels})
	}
	if base.Block != nil {
		d.Block = &analyze.Column{Name: base.Block.Name}
	}
	var trials []float64
	lost := 0
	for u, unit := range s.Layout.Units {
		m := s.Means[unit.Treatment]
		var y float64
		switch s.Family {
		case analyze.FamilyBinomial:
			p := m
			if s.BlockSD > 0 {
				p = 1 / (1 + math.Exp(-(math.Log(m/(1-m)) + blocks[unit.Block])))
			}
			if rho := s.Overdispersion; rho > 0 {
				ab := (1 - rho) / rho
				p = distuv.Beta{Alpha: p * ab, Beta: (1 - p) * ab, Src: r}.Rand()
			}
			y = distuv.Binomial{N: float64(s.Trials), P: p, Src: r}.Rand()
		default:
			mu := m * math.Exp(blocks[unit.Block])
			if phi := s.Overdispersion; phi > 0 {
				mu *= distuv.Gamma{Alpha: 1 / phi, Beta: 1 / phi, Src: r}.Rand()
			}
			y = distuv.Poisson{Lambda: mu, Src: r}.Rand()
		}
		if s.Dropout > 0 && r.Float64() < s.Dropout {
			lost++
			continue
		}
		d.Values = d.Values.Append(strconv.FormatFloat(y, 'f', 0, 64))
		for fi := range d.Factors {
			d.Factors[fi].Values = d.Factors[fi].Values.Append(base.Factors[fi].Values.At(u))
		}
		if d.Block != nil {
			d.Block.Values = d.Block.Values.Append(base.Block.Values.At(u))
		}
		trials = append(trials, float64(s.Trials))
	}
	return d, trials, lost
}
