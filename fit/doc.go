// Package fit turns a finished potential-energy curve into the numbers a
// spectroscopist wants: the minimum, force constants, ω_e, ω_e x_e, B_e,
// α_e, D̄_e, the zero-point energy, vibrational levels on a grid, and D_e /
// D_0 where the curve reaches its limit, each isotopologue separately, with
// standard errors and loud warnings when the data cannot support a number.
//
// # Overview
//
// [Curve] is the main entry point: plain slices of coordinates and energies
// in, a JSON-ready [Result] out. Around every well it fits a weighted
// least-squares polynomial in the displacement from the lowest point, with
// the degree (2–8) chosen by leave-one-out cross-validation and the window
// chosen by energy above the minimum or by point count; the minimum is the
// root of the fitted polynomial's derivative. Force constants f2, f3, f4 at
// the minimum give the perturbative constants ([AnharmonicConstants],
// [RotationalConstants]). The vibrational levels come from a sinc discrete
// variable representation on an interpolant through all points: the
// better of the Morse and extended Morse fits plus a not-a-knot cubic
// spline of its residuals (or, without a global fit, the spline of the
// energies), continued past the data ends. The spline is solved as a
// tridiagonal system, so building and evaluating it is linear in the
// points. The level grid of a well is set by the levels wanted, not by the
// table's span: the classically allowed region at the top of the well plus
// the WKB tail beyond it, with four points per shortest de Broglie
// wavelength. Levels are measured from the minimum of that same potential
// (Minimum.LevelZero). A level counts as bound only when its tail decays
// inside the grid; it is listed only while the continuation past the data
// and the grid's ends move it by at most 1 cm⁻¹.
// [Morse] and [ExtendedMorse] are global nonlinear least-squares forms.
// [Surface2D] fits a two-coordinate scan around its minimum and solves the
// 2×2 GF problem with the G matrix the caller gives. [FitFourier],
// [Torsion] and [RotorLevels] analyse a periodic coordinate over its whole
// period; [Extremum] locates a stationary point with a local polynomial.
// The effective masses and G matrices come from the caller (the kinetic
// metric of the scan's geometry): fit knows no molecules.
//
// # Units
//
// Inside and at this package's boundary: bohr (radian for angles),
// hartree, and masses in amu (unified atomic mass units; an angle's
// effective mass in amu·bohr²). Results carry their unit in the field name
// and JSON key (…_angstrom, …_cm1, …_hartree). Constants are CODATA 2018
// (see constants.go).
//
// # Uncertainties
//
// The *_uncertainty fields are the calibrated uncertainties that the
// command prints as ±. For the local-fit quantities (r_e, E_min, k, ω_e,
// ω_e x_e, B_e, α_e, the perturbative ZPE) they are the standard error
// (*_stderr: residual variance times (AᵀWA)⁻¹, propagated to first order)
// and the model spread (*_spread: the largest change when the degree moves
// by one or the window is scaled by 0.6 or 1.6) in quadrature; D_e adds the
// limit's uncertainty, D_0 the zero-point energy's. A level's uncertainty
// (levels_uncertainty_cm1) adds the end and continuation checks, a 1.3×
// coarser grid, the interpolation error (thinned interpolants with
// Richardson extrapolation at the observed order, and a local-cubic
// interpolant) and the distance of the interpolant's minimum from E_min,
// and the noise of the energies propagated through the spline's adjoint in
// quadrature. Calibrated by TestCurve_Coverage (WELLSCAN_COVERAGE=1): on
// seeded Gaussian noise of 1e-6 and 1e-5 E_h on CO- and H₂-like Morse
// curves, 200 trials each, ±1σ covered the exact value in 82–100 % and ±2σ
// in 97–100 % of trials for every constant (the README has the table).
// Without degrees of freedom the uncertainty is absent (0) and a warning
// says so.
//
// # Sanity gates
//
// A dip at a data end, within the noise, or whose fitted minimum lies
// outside its points is not listed as a minimum; the Result's Warnings say
// why. Impossible constants of a listed minimum (ω_e x_e ≥ ω_e/2, a
// negative ZPE or fundamental, D_0 without a bound level, levels whose
// spacing turns the wrong way) are zeroed and named in Withheld with the
// reason.
//
// # Concurrency
//
// Functions have no shared state and may be called from several goroutines.
package fit
