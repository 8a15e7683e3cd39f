package integral

import (
	"fmt"
	"math"
)

// NumFunctions is the number of basis functions of the shell list, in the
// order the integral matrices use: shells in list order, components within
// a shell in the order documented in the package overview.
func NumFunctions(shells []Shell) int {
	n := 0
	for _, s := range shells {
		n += s.NumFunctions()
	}
	return n
}

// Validate reports the first malformed shell: angular momentum outside
// 0..MaxL, no primitives, a length mismatch between Exps and Coefs, a
// non-positive or non-finite exponent, a non-finite coefficient or
// centre, or a contraction of zero norm. The matrix functions of this
// package panic on shells that fail Validate; call it on shells that come
// from outside the program.
func Validate(shells []Shell) error {
	for i, s := range shells {
		if s.L < 0 || s.L > MaxL {
			return fmt.Errorf("integral: shell %d: angular momentum %d outside 0..%d", i, s.L, MaxL)
		}
		if len(s.Exps) == 0 {
			return fmt.Errorf("integral: shell %d: no primitives", i)
		}
		if len(s.Exps) != len(s.Coefs) {
			return fmt.Errorf("integral: shell %d: %d exponents but %d coefficients", i, len(s.Exps), len(s.Coefs))
		}
		for k, a := range s.Exps {
			if !(a > 0) || math.IsInf(a, 0) {
				return fmt.Errorf("integral: shell %d: exponent %d is %v, want a finite positive number", i, k, a)
			}
			if c := s.Coefs[k]; math.IsNaN(c) || math.IsInf(c, 0) {
				return fmt.Errorf("integral: shell %d: coefficient %d is %v", i, k, c)
			}
		}
		for _, x := range s.Center {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return fmt.Errorf("integral: shell %d: centre %v is not finite", i, s.Center)
			}
		}
		if n := contractionNorm2(s); !(n > 0) || math.IsInf(n, 0) {
			return fmt.Errorf("integral: shell %d: contraction has norm² %v", i, n)
		}
	}
	return nil
}

// contractionNorm2 is ⟨φ|φ⟩ of the axial component of the contraction with
// the coefficients applied to normalised primitives. Same-centre overlap
// of two normalised axial primitives: (2√(ab)/(a+b))^{l+3/2} (basis
// reference README; common practice).
func contractionNorm2(s Shell) float64 {
	var n2 float64
	for i, a := range s.Exps {
		for j, b := range s.Exps {
			n2 += s.Coefs[i] * s.Coefs[j] * math.Pow(2*math.Sqrt(a*b)/(a+b), float64(s.L)+1.5)
		}
	}
	return n2
}

// prepShell is a shell with everything the integral loops need: the
// coefficients already multiplied by the primitive normalisation and the
// contraction renormalisation, and the per-component output scales.
type prepShell struct {
	l      int
	center [3]float64
	exps   []float64
	coefs  []float64 // c_k · N(a_k,l) · renorm, for the axial component
	pure   bool
	nfunc  int       // output functions
	ncart  int       // Cartesian components
	scale  []float64 // per Cartesian component (used when !pure)
	off    int       // first function index
	// transform is set when finishIndex changes anything: a pure shell,
	// or a Cartesian one with scales other than 1.
	transform bool
}

// prepare validates and preprocesses shells.
func prepare(shells []Shell, norm CartNorm) ([]prepShell, error) {
	if err := Validate(shells); err != nil {
		return nil, err
	}
	if norm != NormPerComponent && norm != NormAxial {
		return nil, fmt.Errorf("integral: unknown Cartesian normalisation %d", norm)
	}
	out := make([]prepShell, len(shells))
	off := 0
	for i, s := range shells {
		renorm := 1 / math.Sqrt(contractionNorm2(s))
		ps := prepShell{
			l:      s.L,
			center: s.Center,
			pure:   s.Pure && s.L >= 2,
			nfunc:  s.NumFunctions(),
			ncart:  ncart(s.L),
			off:    off,
		}
		if s.L < 2 {
			ps.nfunc = ncart(s.L) // Pure makes no difference for s and p
		}
		for k, a := range s.Exps {
			if s.Coefs[k] == 0 {
				continue // general contractions carry explicit zeros
			}
			ps.exps = append(ps.exps, a)
			ps.coefs = append(ps.coefs, s.Coefs[k]*primNorm(a, s.L)*renorm)
		}
		ps.scale = make([]float64, ps.ncart)
		for k, e := range cartExps(s.L) {
			if norm == NormPerComponent {
				ps.scale[k] = compScale(e[0], e[1], e[2])
			} else {
				ps.scale[k] = 1
			}
		}
		ps.transform = ps.pure
		for _, f := range ps.scale {
			if f != 1 {
				ps.transform = true
			}
		}
		off += ps.nfunc
		out[i] = ps
	}
	return out, nil
}

func mustPrepare(shells []Shell, norm CartNorm) []prepShell {
	ps, err := prepare(shells, norm)
	if err != nil {
		panic(err.Error())
	}
	return ps
}

// finishIndex transforms one index of a row-major tensor from Cartesian
// components to output functions for shell s: dims are (outer, ncart,
// inner) in src and (outer, nfunc, inner) in dst. dst and src must not
// overlap.
func finishIndex(s *prepShell, outer, inner int, src, dst []float64) {
	nc := s.ncart
	if !s.pure {
		for o := range outer {
			for c := range nc {
				f := s.scale[c]
				sb := src[(o*nc+c)*inner : (o*nc+c+1)*inner]
				db := dst[(o*nc+c)*inner : (o*nc+c+1)*inner]
				for k, v := range sb {
					db[k] = v * f
				}
			}
		}
		return
	}
	nf := s.nfunc
	tab := c2sTables[s.l]
	for o := range outer {
		for m := range nf {
			db := dst[(o*nf+m)*inner : (o*nf+m+1)*inner]
			for k := range db {
				db[k] = 0
			}
			row := tab[m*nc : (m+1)*nc]
			for c, w := range row {
				if w == 0 {
					continue
				}
				sb := src[(o*nc+c)*inner : (o*nc+c+1)*inner]
				for k, v := range sb {
					db[k] += w * v
				}
			}
		}
	}
}
