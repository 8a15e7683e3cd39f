package report

import (
	"fmt"
	"strings"
)

// analysisSections are the summary's sections for what the scan analysis
// adds to a local curve fit: the torsion (Fourier series, distinct minima,
// hindered-rotor levels), the barriers of any 1-D scan and the kinetic
// model's values.
func analysisSections(in Input) []section {
	an := in.Analysis
	if an == nil {
		return nil
	}
	var out []section
	if len(an.Kinetic) > 0 {
		t := table{Head: []string{"where", "kinetic metric", "unit"}}
		for _, k := range an.Kinetic {
			t.Rows = append(t.Rows, []string{k.At, fmt.Sprintf("%.6g", k.Value), k.Unit})
		}
		out = append(out, section{Title: "Kinetic model", Paras: []string{an.MassModel}, Tables: []table{t}})
	}
	if tr := an.Torsion; tr != nil {
		mins := table{Head: []string{"minimum", "at / °", "per turn", "above global / cm⁻¹", "reduced moment / amu·bohr²", "harmonic / cm⁻¹"}}
		for i, m := range tr.Minima {
			pos := make([]string, len(m.Positions))
			for k, p := range m.Positions {
				pos[k] = fmt.Sprintf("%.2f", p)
			}
			harm, mom := "—", "—"
			if m.HarmonicCm1 > 0 {
				harm = valueErr(m.HarmonicCm1, m.HarmonicStderr, 1)
			}
			if m.Inertia > 0 {
				mom = fmt.Sprintf("%.4f", m.Inertia)
			}
			mins.Rows = append(mins.Rows, []string{fmt.Sprintf("well %d", i+1), strings.Join(pos, ", "), fmt.Sprint(m.Multiplicity),
				fmt.Sprintf("%.1f", m.AboveGlobalCm1), mom, harm})
		}
		sec := section{Title: "Torsion", Tables: []table{mins}, Paras: []string{fmt.Sprintf(
			"The whole period is fitted by a Fourier series of order %d (%d points, rms residual %.1e E_h, leave-one-out %.1e E_h); symmetry-equivalent minima are listed once with their number per full turn.",
			tr.Series.Order, tr.Series.Points, tr.Series.RMSResidual, tr.Series.LOOCV)}}
		if r := tr.Rotor; r != nil {
			nv := min(len(r.Levels), 12)
			parts := make([]string, nv)
			for v := range nv {
				parts[v] = fmt.Sprintf("%.2f", r.Levels[v])
			}
			line := fmt.Sprintf("hindered rotor (reduced moment %.4f amu·bohr², %d equivalent wells per turn): ZPE %.2f cm⁻¹", r.Inertia, r.WellsPerTurn, r.ZPE)
			if r.Fundamental > 0 {
				line += fmt.Sprintf(", fundamental %.2f cm⁻¹", r.Fundamental)
			}
			if r.WellsPerTurn > 1 && len(tr.Minima) == 1 {
				line += fmt.Sprintf(", ground-state tunnelling splitting %.3g cm⁻¹", r.Splitting)
			}
			sec.List = append(sec.List, line, "levels / cm⁻¹ above the minimum: "+strings.Join(parts, ", "))
			if r.Note != "" {
				sec.List = append(sec.List, r.Note)
			}
		}
		out = append(out, sec)
	}
	if len(an.Barriers) > 0 {
		t := table{Head: []string{"barrier", "at", "per turn", "height / cm⁻¹", "kJ/mol", "kcal/mol", "above the minimum on the left / cm⁻¹", "on the right / cm⁻¹"}}
		for i, b := range an.Barriers {
			unit := unitSymbol(b.Unit)
			t.Rows = append(t.Rows, []string{fmt.Sprintf("barrier %d", i+1), fmt.Sprintf("%.2f %s", b.X, unit), fmt.Sprint(b.Multiplicity),
				valueErr(b.HeightCm1, b.HeightStderr, 1), fmt.Sprintf("%.3f", b.HeightKJMol), fmt.Sprintf("%.3f", b.HeightKcal),
				fmt.Sprintf("%.1f (at %.2f %s)", b.LeftHeightCm1, b.LeftMin, unit), fmt.Sprintf("%.1f (at %.2f %s)", b.RightHeightCm1, b.RightMin, unit)})
		}
		out = append(out, section{Title: "Barriers", Tables: []table{t}, Paras: []string{"Maxima between minima along the scan, located by " + an.Barriers[0].Source + "; heights above the global minimum, ± one standard error."}})
	}
	return out
}
