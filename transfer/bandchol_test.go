package transfer

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// TestBandCholSolve checks bandCholSolve against gonum's lapack64
// Pbtrf/Pbtrs on random diagonally dominant band matrices (the class
// matrices are of that kind) and that it refuses an indefinite one.
// Tolerance 1e-12 relative: both are backward stable and the matrices
// well conditioned (diagonal dominance 1 + 10 %), so the results agree to
// rounding.
func TestBandCholSolve(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range []struct{ n, kd int }{{2, 1}, {5, 4}, {9, 2}, {33, 8}, {88, 23}, {40, 39}} {
		ld := c.kd + 1
		a := make([]float64, c.n*ld)
		rowSum := make([]float64, c.n)
		for i := 0; i < c.n; i++ {
			for j := i + 1; j < min(c.n, i+ld); j++ {
				v := -rng.Float64()
				a[i*ld+j-i] = v
				rowSum[i] -= v
				rowSum[j] -= v
			}
		}
		for i := 0; i < c.n; i++ {
			a[i*ld] = 1.1*rowSum[i] + rng.Float64()
		}
		b := make([]float64, c.n)
		for i := range b {
			b[i] = rng.Float64()
		}
		a2, b2 := append([]float64(nil), a...), append([]float64(nil), b...)
		if !bandCholSolve(a, b, c.n, c.kd) {
			t.Fatalf("n=%d kd=%d: refused a positive-definite matrix", c.n, c.kd)
		}
		tf, ok := lapack64.Pbtrf(blas64.SymmetricBand{Uplo: blas.Upper, N: c.n, K: c.kd, Stride: ld, Data: a2})
		if !ok {
			t.Fatal("lapack64.Pbtrf refused the matrix")
		}
		lapack64.Pbtrs(tf, blas64.General{Rows: c.n, Cols: 1, Stride: 1, Data: b2})
		for i := range b {
			if math.Abs(b[i]-b2[i]) > 1e-12*math.Abs(b2[i]) {
				t.Errorf("n=%d kd=%d: x[%d] = %.17g, lapack64 %.17g", c.n, c.kd, i, b[i], b2[i])
			}
		}
	}
	// Indefinite: [[1, 2], [2, 1]].
	if bandCholSolve([]float64{1, 2, 1, 0}, []float64{1, 1}, 2, 1) {
		t.Error("accepted an indefinite matrix")
	}
}
