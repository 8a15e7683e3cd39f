package integral

import "math"

// MaxL is the highest shell angular momentum the integral code accepts
// (g functions). The recursions are generic; the limit only bounds the
// scratch sizes and the Boys-function table.
const MaxL = 4

// ncart is the number of Cartesian components of angular momentum l.
func ncart(l int) int { return (l + 1) * (l + 2) / 2 }

// ncum is the number of Cartesian components of all angular momenta 0..l.
func ncum(l int) int {
	if l < 0 {
		return 0
	}
	return (l + 1) * (l + 2) * (l + 3) / 6
}

// cartIndex is the position of x^lx y^ly z^lz within its shell in the
// order lexicographic by (lx desc, ly desc): for d xx,xy,xz,yy,yz,zz.
func cartIndex(lx, ly, lz int) int {
	l := lx + ly + lz
	return (l-lx)*(l-lx+1)/2 + lz
}

// cartExps lists the exponents (lx,ly,lz) of the components of l in shell
// order.
func cartExps(l int) [][3]int {
	out := make([][3]int, 0, ncart(l))
	for lx := l; lx >= 0; lx-- {
		for ly := l - lx; ly >= 0; ly-- {
			out = append(out, [3]int{lx, ly, l - lx - ly})
		}
	}
	return out
}

// dfact returns the double factorial n!! with (−1)!! = 1.
func dfact(n int) float64 {
	r := 1.0
	for k := n; k > 1; k -= 2 {
		r *= float64(k)
	}
	return r
}

// primNorm is the normalisation constant of the axial primitive
// x^l exp(−a r²): (2a/π)^{3/4} (4a)^{l/2} / √((2l−1)!!).
// Source: the basis-set reference README (../../../shared/reference/basis)
// and common practice.
func primNorm(a float64, l int) float64 {
	return math.Pow(2*a/math.Pi, 0.75) * math.Pow(4*a, float64(l)/2) / math.Sqrt(dfact(2*l-1))
}

// compScale is the factor that turns a component with the axial
// normalisation into a unit-normalised one:
// √((2l−1)!! / ((2lx−1)!! (2ly−1)!! (2lz−1)!!)).
func compScale(lx, ly, lz int) float64 {
	l := lx + ly + lz
	return math.Sqrt(dfact(2*l-1) / (dfact(2*lx-1) * dfact(2*ly-1) * dfact(2*lz-1)))
}

// c2sTables[l] is the (2l+1)×ncart(l) matrix, row-major, that maps
// axially normalised Cartesian components (see NormAxial) to unit-normalised
// real solid harmonics, rows ordered m = −l … +l. It is a read-only table
// computed deterministically at package initialisation and never mutated.
var c2sTables = buildC2S(MaxL + 2)

// buildC2S builds the real regular solid harmonics S_lm as polynomials in
// x, y, z by the recursions of Helgaker, Jørgensen & Olsen, Molecular
// Electronic-Structure Theory (Wiley 2000), eqs. 6.4.70–6.4.72:
//
//	S_{l+1,l+1}  = √(2^{δ_l0}(2l+1)/(2l+2)) (x S_ll − (1−δ_l0) y S_{l,−l})
//	S_{l+1,−l−1} = √(2^{δ_l0}(2l+1)/(2l+2)) (y S_ll + (1−δ_l0) x S_{l,−l})
//	S_{l+1,m}    = ((2l+1) z S_lm − √((l+m)(l−m)) r² S_{l−1,m}) / √((l+m+1)(l−m+1))
//
// and then scales every one to unit norm over axially normalised
// Gaussians, using ⟨x^a y^b z^c|x^a' y^b' z^c'⟩/⟨x^l|x^l⟩ =
// (a+a'−1)!!(b+b'−1)!!(c+c'−1)!!/(2l−1)!! for even sums (zero otherwise).
func buildC2S(lmax int) [][]float64 {
	// poly maps (lx,ly,lz) packed as lx*64+ly*8+lz → coefficient; the
	// degree is implied.
	type poly map[int]float64
	key := func(a, b, c int) int { return a*64 + b*8 + c }
	mulX := func(p poly, d int, s float64, out poly) {
		for k, v := range p {
			a, b, c := k/64, (k/8)%8, k%8
			switch d {
			case 0:
				a++
			case 1:
				b++
			case 2:
				c++
			}
			out[key(a, b, c)] += s * v
		}
	}
	// S[l][m+l]
	S := make([][]poly, lmax+1)
	S[0] = []poly{{0: 1}}
	for l := 0; l < lmax; l++ {
		next := make([]poly, 2*l+3)
		for i := range next {
			next[i] = poly{}
		}
		fac := math.Sqrt(float64(2*l+1) / float64(2*l+2))
		if l == 0 {
			fac = math.Sqrt(2 * float64(2*l+1) / float64(2*l+2))
		}
		// m = l+1
		mulX(S[l][2*l], 0, fac, next[2*l+2])
		if l > 0 {
			mulX(S[l][0], 1, -fac, next[2*l+2])
		}
		// m = −(l+1)
		mulX(S[l][2*l], 1, fac, next[0])
		if l > 0 {
			mulX(S[l][0], 0, fac, next[0])
		}
		for m := -l; m <= l; m++ {
			den := math.Sqrt(float64((l + m + 1) * (l - m + 1)))
			t := next[m+l+1]
			mulX(S[l][m+l], 2, float64(2*l+1)/den, t)
			if l >= 1 && m >= -(l-1) && m <= l-1 {
				c := -math.Sqrt(float64((l+m)*(l-m))) / den
				prev := S[l-1][m+l-1]
				for d := range 3 {
					tmp := poly{}
					mulX(prev, d, 1, tmp)
					mulX(tmp, d, c, t)
				}
			}
		}
		S[l+1] = next
	}
	out := make([][]float64, lmax+1)
	for l := 0; l <= lmax; l++ {
		nc := ncart(l)
		exps := cartExps(l)
		mat := make([]float64, (2*l+1)*nc)
		for mi := range 2*l + 1 {
			row := mat[mi*nc : (mi+1)*nc]
			for i, e := range exps {
				row[i] = S[l][mi][key(e[0], e[1], e[2])]
			}
			// norm² over axially normalised components
			var n2 float64
			for i, e := range exps {
				for j, f := range exps {
					if row[i] == 0 || row[j] == 0 {
						continue
					}
					a, b, c := e[0]+f[0], e[1]+f[1], e[2]+f[2]
					if a%2 != 0 || b%2 != 0 || c%2 != 0 {
						continue
					}
					n2 += row[i] * row[j] * dfact(a-1) * dfact(b-1) * dfact(c-1) / dfact(2*l-1)
				}
			}
			s := 1 / math.Sqrt(n2)
			for i := range row {
				row[i] *= s
			}
		}
		out[l] = mat
	}
	return out
}
