package analyze

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// qrFit is a least-squares fit of y on the columns of X by Householder QR.
type qrFit struct {
	n, p  int
	a     blas64.General // packed QR factors of X
	tau   []float64
	qty   []float64 // Qᵀy
	rank  int
	rdiag []float64
}

// rankTol is the relative size below which a diagonal element of R marks a
// column as linearly dependent on those before it.
const rankTol = 1e-9

// fitQR factorises X (n×p, row-major, overwritten) and applies Qᵀ to y.
func fitQR(x []float64, n, p int, y []float64) *qrFit {
	a := blas64.General{Rows: n, Cols: p, Stride: p, Data: x}
	tau := make([]float64, min(n, p))
	work := make([]float64, 1)
	lapack64.Geqrf(a, tau, work, -1)
	work = make([]float64, max(int(work[0]), n, 1))
	lapack64.Geqrf(a, tau, work, len(work))
	c := blas64.General{Rows: n, Cols: 1, Stride: 1, Data: append([]float64(nil), y...)}
	lapack64.Ormqr(blas.Left, blas.Trans, a, tau, c, work, len(work))
	f := &qrFit{n: n, p: p, a: a, tau: tau, qty: c.Data}
	var maxd float64
	f.rdiag = make([]float64, p)
	for j := 0; j < p && j < n; j++ {
		f.rdiag[j] = math.Abs(a.Data[j*p+j])
		maxd = math.Max(maxd, f.rdiag[j])
	}
	for j := 0; j < p && j < n; j++ {
		if f.rdiag[j] > rankTol*maxd {
			f.rank++
		}
	}
	return f
}

// dependent reports whether any column in [from, to) is linearly dependent on
// the columns before it.
func (f *qrFit) dependent(from, to int) bool {
	var maxd float64
	for _, d := range f.rdiag {
		maxd = math.Max(maxd, d)
	}
	for j := from; j < to; j++ {
		if f.rdiag[j] <= rankTol*maxd {
			return true
		}
	}
	return false
}

// residuals returns y − Xb = Q·[0; (Qᵀy)[p:]].
func (f *qrFit) residuals() []float64 {
	r := append([]float64(nil), f.qty...)
	for j := 0; j < f.p && j < f.n; j++ {
		r[j] = 0
	}
	c := blas64.General{Rows: f.n, Cols: 1, Stride: 1, Data: r}
	work := make([]float64, max(f.n, 1))
	lapack64.Ormqr(blas.Left, blas.NoTrans, f.a, f.tau, c, work, len(work))
	return r
}

// applyQT returns Qᵀy for another response with the same factorisation.
func (f *qrFit) applyQT(y []float64) []float64 {
	c := blas64.General{Rows: f.n, Cols: 1, Stride: 1, Data: append([]float64(nil), y...)}
	work := make([]float64, max(f.n, 1))
	lapack64.Ormqr(blas.Left, blas.Trans, f.a, f.tau, c, work, len(work))
	return c.Data
}
