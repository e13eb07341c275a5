package analyze

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"
)

// RankResult is a rank-based test of a treatment factor: Kruskal–Wallis for
// a completely randomised layout, Friedman for a randomised complete block
// layout, followed by pairwise comparisons with Holm's adjustment.
type RankResult struct {
	Method   string `json:"method"`
	Response string `json:"response"`
	Factor   string `json:"factor"`
	Block    string `json:"block,omitempty"`
	// Groups holds each treatment's n, mean and SD on the original scale;
	// MeanRank its mean rank (over all units for Kruskal–Wallis, within
	// blocks for Friedman).
	Groups   []Summary `json:"groups"`
	MeanRank []float64 `json:"mean_ranks"`
	Median   []float64 `json:"medians"`
	// Stat is H (Kruskal–Wallis) or the Friedman χ², both corrected for
	// ties; DF = k − 1; P is from the χ² approximation, PExact (when
	// Exact) from the permutation distribution.
	Stat   float64 `json:"statistic"`
	DF     int     `json:"df"`
	P      float64 `json:"p"`
	Exact  bool    `json:"exact"`
	PExact float64 `json:"p_exact,omitempty"`
	// Ties is the tie-correction divisor (1 without ties).
	Ties float64 `json:"tie_correction"`
	// Effect is the rank-based effect size: ε² = H/(n − 1) for
	// Kruskal–Wallis (Tomczak and Tomczak 2014, Trends Sport Sci. 21,
	// 19–25, eq. 12), Kendall's W = χ²/(b(k − 1)) for Friedman.
	Effect     float64    `json:"effect_size"`
	EffectName string     `json:"effect_size_name"`
	PairMethod string     `json:"pairwise_method"`
	Pairs      []PairTest `json:"pairs"`
	Alpha      float64    `json:"alpha"`
}

// exactLimit bounds the number of permutations (Kruskal–Wallis) or of
// distinct rank-sum states (Friedman) enumerated for an exact p-value.
const exactLimit = 2_000_000

// midranks returns the ranks of v (1-based) with ties given their mean
// rank, and Σ(t³ − t) over the tie groups.
func midranks(v []float64) ([]float64, float64) {
	idx := make([]int, len(v))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return v[idx[a]] < v[idx[b]] })
	r := make([]float64, len(v))
	var ties float64
	for i := 0; i < len(idx); {
		j := i
		for j+1 < len(idx) && v[idx[j+1]] == v[idx[i]] {
			j++
		}
		mr := float64(i+j)/2 + 1
		for k := i; k <= j; k++ {
			r[idx[k]] = mr
		}
		t := float64(j - i + 1)
		ties += t*t*t - t
		i = j + 1
	}
	return r, ties
}

func median(v []float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// KruskalWallis runs the Kruskal–Wallis test of a one-factor completely
// randomised layout (Kruskal and Wallis 1952, "Use of ranks in one-criterion
// variance analysis", JASA 47, 583–621):
//
//	H = [12/(N(N+1)) Σ R_i²/n_i − 3(N+1)] / C,  C = 1 − Σ(t³ − t)/(N³ − N),
//
// with midranks for ties, referred to χ² on k − 1 df. When the number of
// distinct assignments of the units to the groups, N!/Πn_i!, is at most
// exactLimit, the exact permutation p-value P(H ≥ H_obs) given the observed
// ranks (ties included) is computed by enumerating them. Pairwise
// comparisons are Dunn's z tests (Dunn 1964, "Multiple comparisons using
// rank sums", Technometrics 6, 241–252) of mean ranks,
//
//	z = (R̄_i − R̄_j)/sqrt([N(N+1)/12 − Σ(t³ − t)/(12(N − 1))](1/n_i + 1/n_j)),
//
// two-sided, Holm-adjusted; their intervals are for the difference in mean
// ranks at the Bonferroni level 1 − α/m. Checked against
// scipy.stats.kruskal, a brute-force enumeration and an independent
// computation of Dunn's formula (testdata/reference/gen_robust.py).
func KruskalWallis(d Data, alpha float64) (*RankResult, error) {
	if alpha == 0 {
		alpha = 0.05
	}
	lv, group, y, err := oneWay(d, "the Kruskal–Wallis test")
	if err != nil {
		return nil, err
	}
	n := len(y)
	ranks, ties := midranks(y)
	k := len(lv)
	cnt := make([]int, k)
	rs := make([]float64, k)
	byGroup := make([][]float64, k)
	for i, g := range group {
		cnt[g]++
		rs[g] += ranks[i]
		byGroup[g] = append(byGroup[g], y[i])
	}
	N := float64(n)
	c := 1 - ties/(N*N*N-N)
	if c <= 0 {
		return nil, fmt.Errorf("response %q: all %d values are equal; a rank test has nothing to compare", d.Response, n)
	}
	h := func(rs []float64) float64 {
		var s float64
		for g := range rs {
			s += rs[g] * rs[g] / float64(cnt[g])
		}
		return (12/(N*(N+1))*s - 3*(N+1)) / c
	}
	res := &RankResult{Method: "Kruskal–Wallis", Response: d.Response, Factor: d.Factors[0].Name, DF: k - 1, Ties: c, Alpha: alpha,
		Groups: summaries(lv, group, y), EffectName: "epsilon squared", PairMethod: "Dunn (Holm-adjusted)"}
	res.Stat = h(rs)
	res.P = distuv.ChiSquared{K: float64(k - 1)}.Survival(res.Stat)
	res.Effect = res.Stat / (N - 1)
	for g := range rs {
		res.MeanRank = append(res.MeanRank, rs[g]/float64(cnt[g]))
		res.Median = append(res.Median, median(byGroup[g]))
	}
	if p, ok := kwExact(ranks, cnt, h, res.Stat); ok {
		res.Exact, res.PExact = true, p
	}
	// Dunn's comparisons.
	s2 := N*(N+1)/12 - ties/(12*(N-1))
	m := k * (k - 1) / 2
	zc := distuv.UnitNormal.Quantile(1 - alpha/(2*float64(m)))
	var raw []float64
	for i := 0; i < k; i++ {
		for j := i + 1; j < k; j++ {
			diff := res.MeanRank[i] - res.MeanRank[j]
			se := math.Sqrt(s2 * (1/float64(cnt[i]) + 1/float64(cnt[j])))
			z := diff / se
			raw = append(raw, 2*distuv.UnitNormal.Survival(math.Abs(z)))
			res.Pairs = append(res.Pairs, PairTest{Pair: lv[i] + " − " + lv[j], A: lv[i], B: lv[j],
				Estimate: diff, SE: se, Stat: z, DF: math.Inf(1), Lower: diff - zc*se, Upper: diff + zc*se})
		}
	}
	for i, p := range HolmAdjust(raw) {
		res.Pairs[i].P = p
	}
	return res, nil
}

// kwExact enumerates the assignments of the ranked units to groups of the
// given sizes and returns P(H ≥ H_obs), or false when there are more than
// exactLimit assignments.
func kwExact(ranks []float64, cnt []int, h func([]float64) float64, obs float64) (float64, bool) {
	n := len(ranks)
	total := 1.0
	left := n
	for _, c := range cnt {
		total *= binom(left, c)
		left -= c
	}
	if total > exactLimit {
		return 0, false
	}
	k := len(cnt)
	rem := append([]int(nil), cnt...)
	rs := make([]float64, k)
	var hit, all float64
	// Relative tolerance for H ties with the observed value.
	tol := 1e-9 * math.Max(1, math.Abs(obs))
	var rec func(i int)
	rec = func(i int) {
		if i == n {
			all++
			if h(rs) >= obs-tol {
				hit++
			}
			return
		}
		for g := 0; g < k; g++ {
			if rem[g] == 0 {
				continue
			}
			// Each labelled assignment is visited once: unit i goes to
			// each group with room left.
			rem[g]--
			rs[g] += ranks[i]
			rec(i + 1)
			rs[g] -= ranks[i]
			rem[g]++
		}
	}
	rec(0)
	return hit / all, true
}

func binom(n, k int) float64 {
	r := 1.0
	for i := 1; i <= k; i++ {
		r = r * float64(n-k+i) / float64(i)
	}
	return math.Round(r)
}

// Friedman runs Friedman's test of a treatment factor in a randomised
// complete block layout (one unit of each treatment in every block;
// Friedman 1937, "The use of ranks to avoid the assumption of normality
// implicit in the analysis of variance", JASA 32, 675–701). Within each
// block the k treatments are ranked (midranks for ties); with R_j the rank
// sums over b blocks,
//
//	χ²_F = [12/(b k (k+1)) Σ R_j² − 3 b (k+1)] / C,
//	C = 1 − Σ(t³ − t)/(b k (k² − 1)),
//
// referred to χ² on k − 1 df. When the within-block permutations give at
// most exactLimit state updates, the exact permutation p-value is
// computed by convolving the blocks' permutation distributions. Pairwise
// comparisons follow Conover (1999, Practical Nonparametric Statistics, 3rd
// ed., Wiley, section 5.8): with A = Σ R_ij² and B = Σ R_j²/b,
//
//	t = |R_i − R_j| / sqrt(2 b (A − B)/((b − 1)(k − 1))),
//
// on (b − 1)(k − 1) df, two-sided and Holm-adjusted; intervals are for the
// difference in rank sums at the Bonferroni level. Checked against
// scipy.stats.friedmanchisquare, a brute-force enumeration and an independent
// computation of Conover's formula (testdata/reference/gen_robust.py).
func Friedman(d Data, alpha float64) (*RankResult, error) {
	if alpha == 0 {
		alpha = 0.05
	}
	if d.Block == nil {
		return nil, fmt.Errorf("the Friedman test needs blocks: give the block column (--block), or use the Kruskal–Wallis test without blocks")
	}
	if len(d.Factors) != 1 {
		return nil, fmt.Errorf("the Friedman test is for one treatment factor in blocks: this design has %d factors", len(d.Factors))
	}
	d, _, err := Average(d)
	if err != nil {
		return nil, err
	}
	lv, tIdx, err := d.Factors[0].levels()
	if err != nil {
		return nil, err
	}
	bl, bIdx, err := d.Block.levels()
	if err != nil {
		return nil, err
	}
	k, b := len(lv), len(bl)
	if k < 2 || b < 2 {
		return nil, fmt.Errorf("the Friedman test needs at least 2 treatments and 2 blocks (the data have %d and %d)", k, b)
	}
	c0, shift, err := centred(d.Values)
	if err != nil {
		return nil, fmt.Errorf("response %q: %w", d.Response, err)
	}
	sh, _ := shift.Float64()
	cell := make([][]float64, b)
	seen := make([][]bool, b)
	for i := range cell {
		cell[i] = make([]float64, k)
		seen[i] = make([]bool, k)
	}
	for i := range c0 {
		bi, ti := bIdx[i], tIdx[i]
		if seen[bi][ti] {
			return nil, fmt.Errorf("the Friedman test needs exactly one unit of each treatment in each block: %s %s has %s more than once (average subsamples or replicates first, or use --method anova)", d.Block.Name, bl[bi], lv[ti])
		}
		seen[bi][ti] = true
		cell[bi][ti] = c0[i]
	}
	for bi := range seen {
		for ti, ok := range seen[bi] {
			if !ok {
				return nil, fmt.Errorf("the Friedman test needs complete blocks: %s %s has no value for %s (drop the block or use --method anova)", d.Block.Name, bl[bi], lv[ti])
			}
		}
	}
	rs := make([]float64, k)
	var A, ties float64
	blockRanks := make([][]float64, b)
	for bi := range cell {
		r, t := midranks(cell[bi])
		blockRanks[bi] = r
		ties += t
		for ti, v := range r {
			rs[ti] += v
			A += v * v
		}
	}
	K, B := float64(k), float64(b)
	c := 1 - ties/(B*K*(K*K-1))
	if c <= 0 {
		return nil, fmt.Errorf("response %q: every block has all values equal; a rank test has nothing to compare", d.Response)
	}
	stat := func(rs []float64) float64 {
		var s float64
		for _, v := range rs {
			s += v * v
		}
		return (12/(B*K*(K+1))*s - 3*B*(K+1)) / c
	}
	y := make([]float64, len(c0))
	for i, v := range c0 {
		y[i] = v + sh
	}
	res := &RankResult{Method: "Friedman", Response: d.Response, Factor: d.Factors[0].Name, Block: d.Block.Name, DF: k - 1, Ties: c,
		Alpha: alpha, Groups: summaries(lv, tIdx, y), EffectName: "Kendall's W", PairMethod: "Conover (Holm-adjusted)"}
	res.Stat = stat(rs)
	res.P = distuv.ChiSquared{K: K - 1}.Survival(res.Stat)
	res.Effect = res.Stat / (B * (K - 1))
	for ti := range rs {
		res.MeanRank = append(res.MeanRank, rs[ti]/B)
		col := make([]float64, b)
		for bi := range cell {
			col[bi] = cell[bi][ti] + sh
		}
		res.Median = append(res.Median, median(col))
	}
	if p, ok := friedmanExact(blockRanks, stat, res.Stat); ok {
		res.Exact, res.PExact = true, p
	}
	var sumR2 float64
	for _, v := range rs {
		sumR2 += v * v
	}
	df := (B - 1) * (K - 1)
	se := math.Sqrt(2 * B * (A - sumR2/B) / df)
	m := k * (k - 1) / 2
	st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}
	tc := st.Quantile(1 - alpha/(2*float64(m)))
	var raw []float64
	for i := 0; i < k; i++ {
		for j := i + 1; j < k; j++ {
			diff := rs[i] - rs[j]
			t := diff / se
			p := 1.0
			if se > 0 {
				p = 2 * st.Survival(math.Abs(t))
			}
			raw = append(raw, p)
			res.Pairs = append(res.Pairs, PairTest{Pair: lv[i] + " − " + lv[j], A: lv[i], B: lv[j],
				Estimate: diff, SE: se, Stat: t, DF: df, Lower: diff - tc*se, Upper: diff + tc*se})
		}
	}
	for i, p := range HolmAdjust(raw) {
		res.Pairs[i].P = p
	}
	return res, nil
}

// friedmanExact convolves, block by block, the distribution of the rank-sum
// vector over the k! equally likely within-block permutations, and returns
// P(χ²_F ≥ observed), or false when the work (states × permutations, summed
// over blocks) would exceed exactLimit.
// Ranks are doubled to integers (midranks are multiples of 1/2) for the keys.
func friedmanExact(blockRanks [][]float64, stat func([]float64) float64, obs float64) (float64, bool) {
	k := len(blockRanks[0])
	fact := 1.0
	for i := 2; i <= k; i++ {
		fact *= float64(i)
	}
	if fact > exactLimit || k > 8 {
		return 0, false
	}
	type key string
	enc := func(v []int) key {
		b := make([]byte, 0, 2*len(v))
		for _, x := range v {
			b = append(b, byte(x>>8), byte(x))
		}
		return key(b)
	}
	states := map[key]float64{enc(make([]int, k)): 1}
	vecs := map[key][]int{enc(make([]int, k)): make([]int, k)}
	work := 0
	for _, r := range blockRanks {
		perms := permutations(r)
		work += len(states) * len(perms)
		if work > exactLimit {
			return 0, false
		}
		next := map[key]float64{}
		nextV := map[key][]int{}
		for ks, w := range states {
			v := vecs[ks]
			for _, p := range perms {
				nv := make([]int, k)
				for j := range nv {
					nv[j] = v[j] + int(math.Round(2*p[j]))
				}
				nk := enc(nv)
				if _, ok := nextV[nk]; !ok {
					nextV[nk] = nv
				}
				next[nk] += w
			}
		}
		states, vecs = next, nextV
	}
	var hit, all float64
	tol := 1e-9 * math.Max(1, math.Abs(obs))
	rs := make([]float64, k)
	for ks, w := range states {
		for j, x := range vecs[ks] {
			rs[j] = float64(x) / 2
		}
		all += w
		if stat(rs) >= obs-tol {
			hit += w
		}
	}
	return hit / all, true
}

// permutations returns every ordering of v (k! slices, repeats included
// when v has ties, so that each is weighted as one permutation).
func permutations(v []float64) [][]float64 {
	var out [][]float64
	p := append([]float64(nil), v...)
	var rec func(i int)
	rec = func(i int) {
		if i == len(p) {
			out = append(out, append([]float64(nil), p...))
			return
		}
		for j := i; j < len(p); j++ {
			p[i], p[j] = p[j], p[i]
			rec(i + 1)
			p[i], p[j] = p[j], p[i]
		}
	}
	rec(0)
	return out
}
