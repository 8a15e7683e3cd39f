package integral

// Shell is one contracted Gaussian shell of angular momentum L on a centre.
//
// Coefs multiply *normalised* primitives (the convention of basis-set
// libraries); the integral code renormalises the contraction. A general
// contraction (several coefficient columns over one exponent list) is
// represented as several shells that share Exps.
type Shell struct {
	L      int
	Center [3]float64 // bohr
	Atom   int        // index of the atom the shell sits on
	Exps   []float64  // bohr⁻²
	Coefs  []float64  // one coefficient per exponent
	// Pure selects real solid-harmonic (spherical) functions, 2L+1 of
	// them, instead of the (L+1)(L+2)/2 Cartesian ones.
	Pure bool
}

// CartNorm chooses how the Cartesian components of a shell are
// normalised.
type CartNorm int

const (
	// NormPerComponent normalises every Cartesian component to unit
	// self-overlap (the default).
	NormPerComponent CartNorm = iota
	// NormAxial gives every component the normalisation constant of the
	// axial component x^L, so that for d shells ⟨xy|xy⟩ = 1/3. Some
	// published worked examples use it.
	NormAxial
)

// NumFunctions is the number of basis functions the shell contributes.
func (s Shell) NumFunctions() int {
	if s.Pure {
		return 2*s.L + 1
	}
	return (s.L + 1) * (s.L + 2) / 2
}
