package integral

import (
	"math"
	"math/big"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mathext"
)

// boysBig is an independent high-precision reference: the positive series
// F_m(T) = e^{−T} Σ_k (2T)^k / ((2m+1)(2m+3)…(2m+2k+1)) (Abramowitz &
// Stegun 1964, eq. 6.5.29 rewritten for F_m) summed in big.Float with 256
// bits, e^{T} from its own Taylor series.
func boysBig(m int, t float64) float64 {
	const prec = 256
	bt := new(big.Float).SetPrec(prec).SetFloat64(t)
	two := new(big.Float).SetPrec(prec).SetInt64(2)
	tt := new(big.Float).SetPrec(prec).Mul(bt, two)
	eps := new(big.Float).SetPrec(prec).SetMantExp(big.NewFloat(1), -200)

	term := new(big.Float).SetPrec(prec).Quo(big.NewFloat(1).SetPrec(prec), new(big.Float).SetPrec(prec).SetInt64(int64(2*m+1)))
	sum := new(big.Float).SetPrec(prec).Set(term)
	for k := 1; ; k++ {
		term.Mul(term, tt)
		term.Quo(term, new(big.Float).SetPrec(prec).SetInt64(int64(2*m+2*k+1)))
		sum.Add(sum, term)
		rel := new(big.Float).SetPrec(prec).Quo(term, sum)
		if rel.Cmp(eps) < 0 {
			break
		}
	}
	// e^T
	et := new(big.Float).SetPrec(prec).SetInt64(1)
	tk := new(big.Float).SetPrec(prec).SetInt64(1)
	for k := 1; ; k++ {
		tk.Mul(tk, bt)
		tk.Quo(tk, new(big.Float).SetPrec(prec).SetInt64(int64(k)))
		et.Add(et, tk)
		rel := new(big.Float).SetPrec(prec).Quo(tk, et)
		if rel.Cmp(eps) < 0 {
			break
		}
	}
	sum.Quo(sum, et)
	v, _ := sum.Float64()
	return v
}

func boysTestPoints() []float64 {
	ts := []float64{0, 1e-14, 1e-9, 1e-5, 1e-3, 0.0125, 0.025, 0.0249999, 0.02500001}
	// A dense, deliberately off-grid set up to beyond the asymptotic switch.
	for t := 0.0173; t < 80; t *= 1.07 {
		ts = append(ts, t)
	}
	ts = append(ts, boysTMax-1e-9, boysTMax, boysTMax+1e-9, 100, 300)
	return ts
}

func TestBoys_HighPrecisionSeries(t *testing.T) {
	// Tolerance 1e-14 relative: the accuracy the package promises.
	const tol = 1e-14
	f := make([]float64, boysMaxM+1)
	worst := 0.0
	want := make([]float64, boysMaxM+1)
	for _, T := range boysTestPoints() {
		for m := range want {
			want[m] = boysBig(m, T)
		}
		if rel := math.Abs(boys0(T)-want[0]) / want[0]; rel > tol {
			t.Errorf("boys0(%v) = %.17g, want %.17g (rel %.2g)", T, boys0(T), want[0], rel)
		}
		for _, mmax := range []int{0, 4, 8, 16, boysMaxM} {
			boys(T, mmax, f)
			for m := 0; m <= mmax; m++ {
				want := want[m]
				rel := math.Abs(f[m]-want) / want
				worst = max(worst, rel)
				if rel > tol {
					t.Errorf("F_%d(%v) (mmax %d) = %.17g, want %.17g (rel %.2g)", m, T, mmax, f[m], want, rel)
				}
			}
		}
	}
	t.Logf("worst relative error %.3g", worst)
}

func TestBoys_GammaIncReg(t *testing.T) {
	// F_m(T) = Γ(m+½) P(m+½, T) / (2 T^{m+½}) (Abramowitz & Stegun 6.5.1);
	// gonum mathext.GammaIncReg is tested by gonum only to about 1e-10,
	// hence the tolerance.
	const tol = 1e-10
	f := make([]float64, 17)
	for _, T := range []float64{0.01, 0.3, 1, 2.5, 7, 15, 33, 49.9, 60, 120, 1e3, 1e5} {
		boys(T, 16, f)
		for m := 0; m <= 16; m++ {
			a := float64(m) + 0.5
			want := math.Gamma(a) * mathext.GammaIncReg(a, T) / (2 * math.Pow(T, a))
			if !scalar.EqualWithinAbsOrRel(f[m], want, 0, tol) {
				t.Errorf("F_%d(%v) = %.15g, gonum gives %.15g", m, T, f[m], want)
			}
		}
	}
}

func TestBoys_ZeroArgument(t *testing.T) {
	// F_m(0) = 1/(2m+1) exactly (definition).
	f := make([]float64, boysMaxM+1)
	boys(0, boysMaxM, f)
	for m, v := range f {
		if !scalar.EqualWithinAbsOrRel(v, 1/float64(2*m+1), 0, 1e-15) {
			t.Errorf("F_%d(0) = %.17g, want %.17g", m, v, 1/float64(2*m+1))
		}
	}
}
