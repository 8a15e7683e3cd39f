package fit

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// morse is a Morse potential with its analytic properties (P. M. Morse,
// Phys. Rev. 34, 57 (1929), doi:10.1103/PhysRev.34.57). Energies in
// hartree, lengths in bohr, mu in amu.
type morse struct{ de, a, re, mu float64 }

func (m morse) v(r float64) float64 {
	s := 1 - math.Exp(-m.a*(r-m.re))
	return m.de * s * s
}

// omega returns ω_e and ω_e x_e in cm⁻¹: ω_e = a√(2D_e/μ), ω_e x_e =
// ω_e²/(4D_e) (Morse 1929).
func (m morse) omega() (float64, float64) {
	mu := m.mu * AmuInElectronMass
	w := m.a * math.Sqrt(2*m.de/mu)
	return w * HartreeInCm1, w * w / (4 * m.de) * HartreeInCm1
}

// level returns the analytic term value E_v = ω_e(v+½) − ω_e x_e(v+½)² in
// cm⁻¹ above the minimum (Morse 1929; exact for the Morse potential on the
// whole real line).
func (m morse) level(v int) float64 {
	w, wx := m.omega()
	h := float64(v) + 0.5
	return w*h - wx*h*h
}

// bound returns the number of bound levels, v ≤ λ − ½ with λ = √(2μD_e)/a
// (Morse 1929).
func (m morse) bound() int {
	lam := math.Sqrt(2*m.mu*AmuInElectronMass*m.de) / m.a
	return int(math.Floor(lam-0.5)) + 1
}

// pekeris returns B_e and α_e in cm⁻¹: α_e = 6√(ω_e x_e B_e³)/ω_e − 6B_e²/ω_e
// (C. L. Pekeris, "The rotation-vibration coupling in diatomic molecules",
// Phys. Rev. 45, 98 (1934), doi:10.1103/PhysRev.45.98).
func (m morse) pekeris() (float64, float64) {
	w, wx := m.omega()
	be := 1 / (2 * m.mu * AmuInElectronMass * m.re * m.re) * HartreeInCm1
	return be, 6*math.Sqrt(wx*be*be*be)/w - 6*be*be/w
}

func near(t *testing.T, what string, got, want, abs, rel float64) {
	t.Helper()
	if !scalar.EqualWithinAbsOrRel(got, want, abs, rel) {
		t.Errorf("%s = %.12g, want %.12g (tolerance abs %g, rel %g; difference %.3g)", what, got, want, abs, rel, got-want)
	}
}
