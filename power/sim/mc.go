package sim

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"runtime/debug"
	"strconv"
	"sync"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/prob"
	"github.com/allotproject/allot/randomize"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Spec is a Monte-Carlo power question: a layout, the model the responses
// come from, the losses expected, and the analysis that will be run.
type Spec struct {
	Layout design.Layout
	// Means holds the expected mean of each treatment (plan order).
	Means []float64
	// SDs holds the SD between units of each treatment, or one common SD.
	SDs         []float64
	BlockSD     float64
	Dropout     float64 // each unit lost independently with this probability
	Subsamples  int     // measurements per unit (0 or 1: one)
	SubsampleSD float64 // SD between measurements of one unit
	Alpha       float64
	SSType      int
	// PostHoc is "", "tukey" or "dunnett" (against treatment Control).
	// The comparisons are counted in every data set whatever the F test
	// says, as allot analyze runs requested comparisons regardless of it.
	PostHoc string
	Control int
	// Sides (1 or 2; 0 means 2) and Direction ("lower" or "higher", for one
	// side) of Dunnett's comparisons; Tukey's are two-sided.
	Sides     int
	Direction string
	Sims      int
	Seed      uint64
	Workers   int
	// Progress, when set, is called now and then with the number of data
	// sets done; it must be safe for concurrent use.
	Progress func(done int)
}

// Estimate is a simulated probability with its Monte-Carlo error.
type Estimate struct {
	Name  string  `json:"name"`
	Hits  int     `json:"rejections"`
	P     float64 `json:"power"`
	SE    float64 `json:"mc_se"`
	Lower float64 `json:"ci_lower"`
	Upper float64 `json:"ci_upper"`
}

func estimate(name string, hits, n int) Estimate {
	p := float64(hits) / float64(n)
	se := math.Sqrt(p * (1 - p) / float64(n))
	// Wilson's 95% interval (Wilson 1927, JASA 22, 209–212), which stays
	// inside [0, 1] when the power is near 0 or 1.
	z := 1.959963984540054
	den := 1 + z*z/float64(n)
	c := (p + z*z/(2*float64(n))) / den
	h := z * math.Sqrt(p*(1-p)/float64(n)+z*z/(4*float64(n)*float64(n))) / den
	return Estimate{Name: name, Hits: hits, P: p, SE: se, Lower: math.Max(0, c-h), Upper: math.Min(1, c+h)}
}

// Result is the outcome of a simulation.
type Result struct {
	Sims      int        `json:"sims"`
	Terms     []Estimate `json:"terms"`
	AnyPair   *Estimate  `json:"any_pair,omitempty"`
	Pairs     []Estimate `json:"pairs,omitempty"`
	Failed    int        `json:"failed"` // data sets that could not be analysed (an empty cell)
	MeanLost  float64    `json:"mean_units_lost"`
	FastPath  bool       `json:"sufficient_statistics"`
	Cancelled bool       `json:"cancelled"`
}

// counts accumulates one worker's tallies.
type counts struct {
	n, failed, lost int
	terms           []int
	anyPair         int
	pairs           []int
}

func (c *counts) add(o counts) {
	c.n += o.n
	c.failed += o.failed
	c.lost += o.lost
	c.anyPair += o.anyPair
	for i := range o.terms {
		c.terms[i] += o.terms[i]
	}
	for i := range o.pairs {
		c.pairs[i] += o.pairs[i]
	}
}

// dataStream is the offset of the per-data-set streams: data set i draws
// from randomize.Stream(seed, dataStream + i), so the result does not
// depend on how the data sets are shared between workers.
const dataStream = 1 << 41

// Run simulates s.Sims data sets and analyses each with the design's ANOVA
// (and the planned comparisons), counting rejections at s.Alpha. It stops
// early, with Cancelled set and the tallies so far, when ctx is done.
func Run(ctx context.Context, s Spec) (Result, error) {
	if err := s.validate(); err != nil {
		return Result{}, err
	}
	d := designData(s.Layout)
	eng, err := analyze.NewEngine(d, s.SSType)
	if err != nil {
		return Result{}, err
	}
	terms := eng.Terms
	k := len(s.Layout.Plan.Treatments())
	var pairs [][2]int
	if s.PostHoc != "" {
		for a := 0; a < k; a++ {
			for b := a + 1; b < k; b++ {
				if s.PostHoc == "dunnett" && a != s.Control && b != s.Control {
					continue
				}
				pairs = append(pairs, [2]int{a, b})
			}
		}
	}
	fast := s.Dropout == 0 && balanced(s.Layout) && !s.Layout.Plan.Generalised()
	workers := s.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	total := counts{terms: make([]int, len(terms)), pairs: make([]int, len(pairs))}
	var mu sync.Mutex
	var wg sync.WaitGroup
	next := make(chan int)
	go func() {
		defer close(next)
		const chunk = 64
		for i := 0; i < s.Sims; i += chunk {
			select {
			case next <- i:
			case <-ctx.Done():
				return
			}
		}
	}()
	// A panic in a worker is carried to the caller's goroutine and raised
	// there, where the command boundary turns it into an internal error
	// (a panic in a goroutine would end the process with status 2).
	var crash any
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer func() {
				if r := recover(); r != nil {
					mu.Lock()
					if crash == nil {
						crash = fmt.Sprintf("%v\n%s", r, debug.Stack())
					}
					mu.Unlock()
				}
			}()
			e := eng
			if w > 0 {
				e, _ = analyze.NewEngine(d, s.SSType)
			}
			wk := newWorker(s, e, terms, pairs, fast)
			for start := range next {
				c := counts{terms: make([]int, len(terms)), pairs: make([]int, len(pairs))}
				for i := start; i < min(start+64, s.Sims); i++ {
					wk.one(i, &c)
				}
				mu.Lock()
				total.add(c)
				done := total.n
				mu.Unlock()
				if s.Progress != nil {
					s.Progress(done)
				}
			}
		}()
	}
	wg.Wait()
	if crash != nil {
		panic(fmt.Sprintf("sim: worker: %v", crash))
	}
	res := Result{Sims: total.n, Failed: total.failed, FastPath: fast, Cancelled: total.n < s.Sims}
	if total.n == 0 {
		return res, nil
	}
	res.MeanLost = float64(total.lost) / float64(total.n)
	for i, t := range terms {
		res.Terms = append(res.Terms, estimate(t.Source, total.terms[i], total.n))
	}
	if len(pairs) > 0 {
		tr := s.Layout.Plan.Treatments()
		e := estimate("any comparison", total.anyPair, total.n)
		res.AnyPair = &e
		for i, p := range pairs {
			res.Pairs = append(res.Pairs, estimate(tr[p[1]].Name+" − "+tr[p[0]].Name, total.pairs[i], total.n))
		}
	}
	return res, nil
}

func (s Spec) validate() error {
	nt := len(s.Layout.Plan.Treatments())
	switch {
	case len(s.Means) != nt:
		return fmt.Errorf("%d means for %d treatments: give one mean per treatment", len(s.Means), nt)
	case len(s.SDs) != 1 && len(s.SDs) != nt:
		return fmt.Errorf("%d SDs for %d treatments: give one SD, or one per treatment", len(s.SDs), nt)
	case s.Sims < 1:
		return fmt.Errorf("%d simulations: give at least 1", s.Sims)
	case !(s.Dropout >= 0 && s.Dropout < 1):
		return fmt.Errorf("dropout %g: must be from 0 up to (not including) 1", s.Dropout)
	case !(s.Alpha > 0 && s.Alpha < 1):
		return fmt.Errorf("alpha %g: must be between 0 and 1", s.Alpha)
	case s.PostHoc != "" && len(s.Layout.Plan.Factors) != 1:
		return fmt.Errorf("planned comparisons are simulated for one-factor designs")
	case s.PostHoc != "" && s.PostHoc != "tukey" && s.PostHoc != "dunnett":
		return fmt.Errorf("comparisons %q: simulate tukey or dunnett", s.PostHoc)
	}
	for _, v := range append(append([]float64{}, s.SDs...), s.BlockSD, s.SubsampleSD) {
		if !(v >= 0) || math.IsInf(v, 0) {
			return fmt.Errorf("SDs must be finite and non-negative")
		}
	}
	if s.PostHoc == "tukey" && s.Sides == 1 {
		return fmt.Errorf("the Tukey comparisons are two-sided")
	}
	return nil
}

// designData is the layout's design as analysis columns.
func designData(l design.Layout) analyze.Data {
	p := l.Plan
	tr := p.Treatments()
	d := analyze.Data{Response: "simulated"}
	for fi, f := range p.Factors {
		c := analyze.Column{Name: f.Name, Levels: f.Levels}
		for _, u := range l.Units {
			c.Values = c.Values.Append(tr[u.Treatment].Levels[fi])
		}
		d.Factors = append(d.Factors, c)
	}
	if p.Design == design.RCBD {
		b := analyze.Column{Name: p.BlockName}
		for _, u := range l.Units {
			b.Values = b.Values.Append(strconv.Itoa(u.Block))
		}
		d.Block = &b
		d.BlockInteraction = p.Generalised()
	}
	return d
}

func balanced(l design.Layout) bool {
	p := l.Plan
	if p.Units != nil {
		return false
	}
	for _, r := range p.Reps {
		if r != p.Reps[0] {
			return false
		}
	}
	return true
}

// worker holds one goroutine's state.
type worker struct {
	s      Spec
	eng    *analyze.Engine
	terms  []analyze.Term
	pairs  [][2]int
	fast   bool
	y      []float64
	keep   []bool
	blocks []float64
	crit   map[[2]int]float64 // (df1, df2) → F critical value
	qcrit  map[int]float64    // df → studentized-range or Dunnett critical value
	// fast path: for every subset (bit mask) of factors, the marginal cell
	// of each treatment and the number of such cells
	sumsT   []float64
	sumsB   []float64
	margin  [][]int
	ncells  []int
	masks   []int // per term: its factors as a bit mask
	margSum []float64
	center  float64
	// params is the number of model coefficients (1 + the terms' df): a
	// data set with no more surviving units than that, or with a treatment
	// or block lost entirely, cannot be analysed.
	params int
	nTreat []int
	nBlock []int
}

func newWorker(s Spec, e *analyze.Engine, terms []analyze.Term, pairs [][2]int, fast bool) *worker {
	n := len(s.Layout.Units)
	w := &worker{s: s, eng: e, terms: terms, pairs: pairs, fast: fast, y: make([]float64, n), keep: make([]bool, n),
		blocks: make([]float64, s.Layout.Plan.Blocks+1), crit: map[[2]int]float64{}, qcrit: map[int]float64{}}
	for _, m := range s.Means {
		w.center += m / float64(len(s.Means))
	}
	w.params = 1
	for _, t := range terms {
		w.params += t.DF
	}
	w.nTreat = make([]int, len(s.Means))
	w.nBlock = make([]int, s.Layout.Plan.Blocks+1)
	if fast {
		p := s.Layout.Plan
		tr := p.Treatments()
		nf := len(p.Factors)
		w.margin = make([][]int, 1<<nf)
		w.ncells = make([]int, 1<<nf)
		for mask := range w.margin {
			w.margin[mask] = make([]int, len(tr))
			size := 1
			for fi := 0; fi < nf; fi++ {
				if mask&(1<<fi) != 0 {
					size *= len(p.Factors[fi].Levels)
				}
			}
			w.ncells[mask] = size
			for t, tt := range tr {
				key := 0
				for fi := 0; fi < nf; fi++ {
					if mask&(1<<fi) != 0 {
						key = key*len(p.Factors[fi].Levels) + indexOf(p.Factors[fi].Levels, tt.Levels[fi])
					}
				}
				w.margin[mask][t] = key
			}
		}
		w.masks = make([]int, len(terms))
		for k, t := range terms {
			for _, name := range t.Factors {
				for fi, fa := range p.Factors {
					if fa.Name == name {
						w.masks[k] |= 1 << fi
					}
				}
			}
		}
		w.sumsT = make([]float64, len(tr))
		w.sumsB = make([]float64, p.Blocks+1)
		w.margSum = make([]float64, len(tr))
	}
	return w
}

func (w *worker) fcrit(df1, df2 int) float64 {
	k := [2]int{df1, df2}
	c, ok := w.crit[k]
	if !ok {
		c = distuv.F{D1: float64(df1), D2: float64(df2)}.Quantile(1 - w.s.Alpha)
		w.crit[k] = c
	}
	return c
}

// postCrit returns the critical value of the planned comparisons at error
// df: the studentized range quantile for Tukey, Dunnett's quantile for the
// planned group sizes for Dunnett. With losses the analysis would use the
// realised sizes; Dunnett's critical value moves only in the second or
// third decimal with them, and recomputing it (a double integral) for every
// simulated data set would cost seconds each, so the planned sizes are
// used. Values are cached per df.
func (w *worker) postCrit(df int) float64 {
	if c, ok := w.qcrit[df]; ok {
		return c
	}
	k := len(w.s.Means)
	var c float64
	if w.s.PostHoc == "tukey" {
		c = prob.StudentizedRange{K: float64(k), Nu: float64(df)}.Quantile(1 - w.s.Alpha)
	} else {
		sizes := make([]int, k)
		for _, u := range w.s.Layout.Units {
			sizes[u.Treatment]++
		}
		var lam []float64
		for i, n := range sizes {
			if i != w.s.Control {
				lam = append(lam, math.Sqrt(float64(n)/float64(n+sizes[w.s.Control])))
			}
		}
		sides := w.s.Sides
		if sides != 1 {
			sides = 2
		}
		c = prob.Dunnett{Lambda: lam, Nu: float64(df), Sides: sides}.Quantile(1 - w.s.Alpha)
	}
	w.qcrit[df] = c
	return c
}

// one simulates and analyses data set i.
func (w *worker) one(i int, c *counts) {
	s := w.s
	r := rand.New(randomize.Stream(s.Seed, dataStream+uint64(i)))
	for b := 1; b < len(w.blocks); b++ {
		w.blocks[b] = s.BlockSD * r.NormFloat64()
	}
	lost := 0
	for u, unit := range s.Layout.Units {
		sd := s.SDs[0]
		if len(s.SDs) > 1 {
			sd = s.SDs[unit.Treatment]
		}
		y := s.Means[unit.Treatment] + w.blocks[unit.Block] + sd*r.NormFloat64() - w.center
		if s.Subsamples > 1 {
			// The unit's value is the mean of its subsamples, as analysed.
			var m float64
			for k := 0; k < s.Subsamples; k++ {
				m += s.SubsampleSD * r.NormFloat64()
			}
			y += m / float64(s.Subsamples)
		} else if s.SubsampleSD > 0 {
			y += s.SubsampleSD * r.NormFloat64()
		}
		w.y[u] = y
		w.keep[u] = s.Dropout == 0 || r.Float64() >= s.Dropout
		if !w.keep[u] {
			lost++
		}
	}
	c.n++
	c.lost += lost
	var f analyze.Fitted
	var err error
	if w.fast {
		f = w.sufficient()
	} else {
		keep := w.keep
		if s.Dropout == 0 {
			keep = nil
		} else if !w.analysable() {
			c.failed++
			return
		}
		f, err = w.eng.Fit(w.y, keep)
	}
	if err != nil || f.ResDF < 1 {
		c.failed++
		return
	}
	mse := f.ResSS / float64(f.ResDF)
	for k := range w.terms {
		if f.DF[k] > 0 && f.SS[k]/float64(f.DF[k])/mse > w.fcrit(f.DF[k], f.ResDF) {
			c.terms[k]++
		}
	}
	if len(w.pairs) > 0 {
		w.comparisons(mse, f.ResDF, c)
	}
}

// analysable reports whether the surviving units can be analysed: more
// of them than model coefficients, every treatment still present, and
// every block with at least two units. The engine's QR factorisation needs at least as many rows
// as columns, so this is checked before fitting.
func (w *worker) analysable() bool {
	clear(w.nTreat)
	clear(w.nBlock)
	kept := 0
	for u, unit := range w.s.Layout.Units {
		if w.keep[u] {
			kept++
			w.nTreat[unit.Treatment]++
			w.nBlock[unit.Block]++
		}
	}
	if kept <= w.params {
		return false
	}
	for _, n := range w.nTreat {
		if n == 0 {
			return false
		}
	}
	// As allot analyze requires, every block holds at least two units to
	// compare treatments within it.
	for b := 1; b < len(w.nBlock) && len(w.nBlock) > 2; b++ {
		if w.nBlock[b] < 2 {
			return false
		}
	}
	return true
}

// comparisons counts the significant planned comparisons of data set y,
// on least-squares means with model-based standard errors as allot
// analyze computes them: for a completely randomised layout these are the
// raw means with SE² = MSE(1/nₐ + 1/n_b); for complete blocks with units
// lost they come from the additive block + treatment fit (lsDiffs), where
// the raw means would carry block effects.
func (w *worker) comparisons(mse float64, df int, c *counts) {
	k := len(w.s.Means)
	sum := make([]float64, k)
	n := make([]int, k)
	lost := false
	for u, unit := range w.s.Layout.Units {
		if w.keep[u] {
			sum[unit.Treatment] += w.y[u]
			n[unit.Treatment]++
		} else {
			lost = true
		}
	}
	est := make([]float64, k)
	for i := range est {
		if n[i] > 0 {
			est[i] = sum[i] / float64(n[i])
		}
	}
	// se2 returns the squared SE of est[a] − est[b] over MSE.
	se2 := func(a, b int) float64 { return 1/float64(n[a]) + 1/float64(n[b]) }
	if lost && w.s.Layout.Plan.Design == design.RCBD {
		beta, cov, ok := w.lsDiffs()
		if !ok {
			return
		}
		est = beta
		se2 = func(a, b int) float64 { return cov.At(a, a) + cov.At(b, b) - 2*cov.At(a, b) }
	}
	crit := w.postCrit(df)
	any := false
	for i, p := range w.pairs {
		a, b := p[0], p[1]
		if n[a] == 0 || n[b] == 0 {
			continue
		}
		diff := math.Abs(est[a] - est[b])
		var stat float64
		if w.s.PostHoc == "tukey" {
			stat = diff / math.Sqrt(mse/2*se2(a, b))
		} else {
			if w.s.Sides == 1 {
				// treatment minus control, signed by the expected direction
				t, ctl := b, a
				if b == w.s.Control {
					t, ctl = a, b
				}
				diff = est[t] - est[ctl]
				if w.s.Direction == "lower" {
					diff = -diff
				}
			}
			stat = diff / math.Sqrt(mse*se2(a, b))
		}
		if stat > crit {
			c.pairs[i]++
			any = true
		}
	}
	if any {
		c.anyPair++
	}
}

// lsDiffs fits the additive model y = τ_treatment + β_block + e (blocks
// 2..B coded against block 1) to the surviving units by least squares and
// returns the treatment coefficients τ, whose differences are the
// differences of the least-squares means (the block terms cancel), and
// the treatment block of (X'X)⁻¹, which times MSE gives their covariance.
func (w *worker) lsDiffs() ([]float64, *mat.Dense, bool) {
	k := len(w.s.Means)
	nb := w.s.Layout.Plan.Blocks
	p := k + nb - 1
	xtx := mat.NewSymDense(p, nil)
	xty := mat.NewVecDense(p, nil)
	cols := make([]int, 0, 2)
	for u, unit := range w.s.Layout.Units {
		if !w.keep[u] {
			continue
		}
		cols = append(cols[:0], unit.Treatment)
		if unit.Block > 1 {
			cols = append(cols, k+unit.Block-2)
		}
		for _, i := range cols {
			xty.SetVec(i, xty.AtVec(i)+w.y[u])
			for _, j := range cols {
				if j >= i {
					xtx.SetSym(i, j, xtx.At(i, j)+1)
				}
			}
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(xtx) {
		return nil, nil, false
	}
	var inv mat.SymDense
	if err := ch.InverseTo(&inv); err != nil {
		return nil, nil, false
	}
	var beta mat.VecDense
	beta.MulVec(&inv, xty)
	est := make([]float64, k)
	cov := mat.NewDense(k, k, nil)
	for i := 0; i < k; i++ {
		est[i] = beta.AtVec(i)
		for j := 0; j < k; j++ {
			cov.Set(i, j, inv.At(i, j))
		}
	}
	return est, cov, true
}

// sufficient computes the ANOVA of a balanced, complete data set from
// marginal sums: for a term T of factors, SS_T = Σ_{S ⊆ T} (−1)^{|T∖S|} Q(S)
// with Q(S) = Σ over the level combinations of S of (sum²/count) and
// Q(∅) = (grand sum)²/N (the inclusion–exclusion form of the orthogonal
// decomposition of a balanced factorial; Scheffé 1959, The Analysis of
// Variance, section 4.1). Blocks are orthogonal to treatments.
func (w *worker) sufficient() analyze.Fitted {
	p := w.s.Layout.Plan
	nb := p.Blocks
	clear(w.sumsT)
	clear(w.sumsB)
	var grand, sq float64
	for u, unit := range w.s.Layout.Units {
		y := w.y[u]
		w.sumsT[unit.Treatment] += y
		w.sumsB[unit.Block] += y
		grand += y
		sq += y * y
	}
	N := float64(len(w.s.Layout.Units))
	cf := grand * grand / N
	// Q for every subset of factors, indexed by bit mask.
	q := make([]float64, len(w.margin))
	q[0] = cf
	for mask := 1; mask < len(w.margin); mask++ {
		m := w.margSum[:w.ncells[mask]]
		clear(m)
		for t, key := range w.margin[mask] {
			m[key] += w.sumsT[t]
		}
		count := N / float64(w.ncells[mask])
		for _, v := range m {
			q[mask] += v * v / count
		}
	}
	f := analyze.Fitted{SS: make([]float64, len(w.terms)), DF: make([]int, len(w.terms))}
	var used float64
	for k, t := range w.terms {
		f.DF[k] = t.DF
		if t.Block {
			var qb float64
			for b := 1; b <= nb; b++ {
				qb += w.sumsB[b] * w.sumsB[b] / (N / float64(nb))
			}
			f.SS[k] = qb - cf
		} else {
			mask := w.masks[k]
			for sub := mask; ; sub = (sub - 1) & mask {
				sign := 1.0
				if bitsDiff(mask, sub)%2 == 1 {
					sign = -1
				}
				f.SS[k] += sign * q[sub]
				if sub == 0 {
					break
				}
			}
		}
		used += f.SS[k]
	}
	df := len(w.s.Layout.Units) - 1
	for _, d := range f.DF {
		df -= d
	}
	f.ResDF = df
	f.ResSS = sq - cf - used
	return f
}

func bitsDiff(a, b int) int {
	n := 0
	for x := a &^ b; x != 0; x &= x - 1 {
		n++
	}
	return n
}

func indexOf(levels []string, l string) int {
	for i, v := range levels {
		if v == l {
			return i
		}
	}
	return -1
}
