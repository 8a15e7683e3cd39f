package integral

import "math"

// The Boys function F_m(T) = ∫₀¹ t^{2m} exp(−T t²) dt.
//
// Method (common practice; e.g. Helgaker, Jørgensen & Olsen, Molecular
// Electronic-Structure Theory, Wiley 2000, §9.8.1):
//
//   - 0 ≤ T < boysTMax: a six-term Taylor expansion about the nearest grid
//     point T₀ (spacing boysStep) gives the highest order requested,
//     F_M(T) = Σ_k F_{M+k}(T₀) (T₀−T)^k / k!, using dF_m/dT = −F_{m+1};
//     lower orders follow by the stable downward recursion
//     F_m = (2T F_{m+1} + e^{−T}) / (2m+1). With |T−T₀| ≤ 0.025 the
//     truncation error is below 0.025⁷/7! ≈ 1.2e-15 relative.
//   - T ≥ boysTMax: F_0 = ½√(π/T) (erfc √T < 1e-23 there) and the upward
//     recursion F_m = ((2m−1) F_{m−1} − e^{−T}) / (2T), which is stable for
//     T > m.
const (
	boysMaxM   = 28 // highest order callers may request (4·g = 16, with room for derivatives)
	boysTaylor = 7  // number of Taylor terms (orders 0..6)
	boysStep   = 0.05
	boysTMax   = 50.0
	boysNGrid  = int(boysTMax/boysStep) + 2
	boysNOrder = boysMaxM + boysTaylor
)

// boysTable holds F_m(T_k) for T_k = k·boysStep, m = 0..boysNOrder-1,
// row-major by grid point. It is a read-only package-level table computed
// deterministically once at package initialisation and never mutated
// afterwards, so it is safe for concurrent use and is not mutable global
// state.
var boysTable = buildBoysTable()

// boysInvOdd[m] = 1/(2m+1), for the recursions.
var boysInvOdd = func() (t [boysNOrder]float64) {
	for m := range t {
		t[m] = 1 / float64(2*m+1)
	}
	return t
}()

// boysExpTab[k] = exp(−T_k) on the grid, so that exp(−T) =
// exp(−T_k)·exp(T_k−T) needs only a short Taylor series.
var boysExpTab = func() []float64 {
	t := make([]float64, boysNGrid)
	for k := range t {
		t[k] = math.Exp(-float64(k) * boysStep)
	}
	return t
}()

// boysInvFact[k] = 1/k!, for the Taylor expansion.
var boysInvFact = [boysTaylor]float64{1, 1, 1.0 / 2, 1.0 / 6, 1.0 / 24, 1.0 / 120, 1.0 / 720}

func buildBoysTable() []float64 {
	tab := make([]float64, boysNGrid*boysNOrder)
	for k := range boysNGrid {
		t := float64(k) * boysStep
		row := tab[k*boysNOrder : (k+1)*boysNOrder]
		top := boysNOrder - 1
		row[top] = boysSeries(top, t)
		e := math.Exp(-t)
		for m := top - 1; m >= 0; m-- {
			row[m] = (2*t*row[m+1] + e) / float64(2*m+1)
		}
	}
	return tab
}

// boysSeries evaluates F_m(T) = e^{−T} Σ_k (2T)^k / ((2m+1)(2m+3)…(2m+2k+1)),
// a series of positive terms (Abramowitz & Stegun, Handbook of Mathematical
// Functions, 1964, eq. 6.5.29 for the incomplete gamma function, written for
// F_m). Accurate to a few ulps for the moderate T of the table.
func boysSeries(m int, t float64) float64 {
	term := 1 / float64(2*m+1)
	sum := term
	for k := 1; k < 2000; k++ {
		term *= 2 * t / float64(2*m+2*k+1)
		sum += term
		if term < sum*1e-18 {
			break
		}
	}
	return math.Exp(-t) * sum
}

// boys fills f[0..mmax] with F_m(t). It panics if mmax > boysMaxM, which
// is a programmer error (the angular momentum is validated before).
func boys(t float64, mmax int, f []float64) {
	if mmax > boysMaxM {
		panic("integral: Boys order too high")
	}
	f = f[:mmax+1]
	if t < boysTMax {
		k := int(t/boysStep + 0.5)
		dt := float64(k)*boysStep - t
		row := boysTable[k*boysNOrder+mmax : k*boysNOrder+mmax+boysTaylor]
		// Horner in dt: Σ_k row[k] dt^k / k!
		v := row[6] * boysInvFact[6]
		v = v*dt + row[5]*boysInvFact[5]
		v = v*dt + row[4]*boysInvFact[4]
		v = v*dt + row[3]*boysInvFact[3]
		v = v*dt + row[2]*boysInvFact[2]
		v = v*dt + row[1]
		v = v*dt + row[0]
		f[mmax] = v
		if mmax > 0 {
			// exp(dt) to 5e-18 relative for |dt| ≤ 0.025 (Taylor, 8 terms).
			x := dt
			ex := 1 + x*(1+x*(0.5+x*(1.0/6+x*(1.0/24+x*(1.0/120+x*(1.0/720+x*(1.0/5040)))))))
			e := boysExpTab[k] * ex
			t2 := 2 * t
			for m := mmax - 1; m >= 0; m-- {
				f[m] = (t2*f[m+1] + e) * boysInvOdd[m]
			}
		}
		return
	}
	f[0] = 0.5 * math.Sqrt(math.Pi/t)
	if mmax > 0 {
		e := math.Exp(-t)
		inv2t := 0.5 / t
		for m := 1; m <= mmax; m++ {
			f[m] = (float64(2*m-1)*f[m-1] - e) * inv2t
		}
	}
}

// boys0 is F_0(t), the m = 0 case of boys without the scratch slice.
func boys0(t float64) float64 {
	if t < boysTMax {
		k := int(t/boysStep + 0.5)
		dt := float64(k)*boysStep - t
		row := boysTable[k*boysNOrder : k*boysNOrder+boysTaylor]
		v := row[6] * boysInvFact[6]
		v = v*dt + row[5]*boysInvFact[5]
		v = v*dt + row[4]*boysInvFact[4]
		v = v*dt + row[3]*boysInvFact[3]
		v = v*dt + row[2]*boysInvFact[2]
		v = v*dt + row[1]
		return v*dt + row[0]
	}
	return 0.5 * math.Sqrt(math.Pi/t)
}
