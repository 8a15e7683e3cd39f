package integral

import (
	"math"
	"testing"
)

// dropZeros returns the shells with the zero coefficients of every column
// left out, as the basis library hands general contractions over.
func dropZeros(shells []Shell) []Shell {
	out := make([]Shell, len(shells))
	for i, s := range shells {
		s.Exps, s.Coefs = nil, nil
		for k, c := range shells[i].Coefs {
			if c != 0 {
				s.Exps = append(s.Exps, shells[i].Exps[k])
				s.Coefs = append(s.Coefs, c)
			}
		}
		out[i] = s
	}
	return out
}

// TestGroups_GeneralContractions: water in cc-pVDZ (testdata/basis/
// cc-pvdz-HCO.json: O 3s2p1d, H 2s1p, the s and p columns of each atom
// general contractions over one primitive set) forms one shell group per
// atom and angular momentum: O s (3 members), O p (2), O d, and per H
// s (2) and p: 7 groups from 12 shells.
func TestGroups_GeneralContractions(t *testing.T) {
	for _, shells := range [][]Shell{
		basisShells(t, "cc-pvdz-HCO.json", waterAtoms(t), true),
		dropZeros(basisShells(t, "cc-pvdz-HCO.json", waterAtoms(t), true)),
	} {
		ps, err := prepare(shells, NormPerComponent)
		if err != nil {
			t.Fatal(err)
		}
		gs := buildGroups(shells, ps, groupAll)
		var members []int
		for _, g := range gs {
			members = append(members, g.m)
		}
		want := []int{3, 2, 1, 2, 1, 2, 1} // O s, p, d; H s, p; H s, p
		if len(shells) != 12 || len(members) != len(want) {
			t.Fatalf("%d shells in %d groups %v, want 12 shells in groups %v", len(shells), len(members), members, want)
		}
		for i := range want {
			if members[i] != want[i] {
				t.Fatalf("group members %v, want %v", members, want)
			}
		}
		if ug := buildGroups(shells, ps, groupNone); len(ug) != len(shells) {
			t.Errorf("ungrouped: %d groups for %d shells", len(ug), len(shells))
		}
	}
}

// TestGeneralContraction_MatchesSeparateShells: the in-core integrals of
// grouped general contractions (one recurrence per primitive quartet,
// contracted into every member) equal the same integrals computed shell
// by shell with the single-shell code (newShellPair + quartet, no
// primitive screening), an independent evaluation of the same sums in
// another order. Tolerance 1e-13 hartree: rounding of sums of a few
// thousand terms of size ≤ 5 (common practice), plus the in-core screening
// (quartets below 1e-15 stored as zero, primitive quartets skipped below
// 1e-15 in total per block).
func TestGeneralContraction_MatchesSeparateShells(t *testing.T) {
	// Water in 6-31G* groups the oxygen's s and p shells over one
	// exponent set (2sp, 3sp): 4 groups (1s, 2sp, 3sp, d) from 6 shells.
	sp := basisShells(t, "6-31gs-HCO.json", waterAtoms(t), false)
	if gs := buildGroups(sp, mustPrepare(sp, NormPerComponent), groupAll); len(sp) != 10 || len(gs) != 8 || gs[1].m != 2 || gs[1].lmin != 0 || gs[1].rep.l != 1 {
		t.Fatalf("6-31G* water: %d shells in %d groups (second: %d members), want 10 in 8 (2sp: 2 members, l 0 and 1)", len(sp), len(gs), gs[1].m)
	}
	water := waterAtoms(t)
	for _, tc := range []struct {
		name   string
		shells []Shell
	}{
		{"cc-pVDZ pure, zero columns kept", basisShells(t, "cc-pvdz-HCO.json", water, true)},
		{"cc-pVDZ pure, zeros dropped", dropZeros(basisShells(t, "cc-pvdz-HCO.json", water, true))},
		{"cc-pVDZ Cartesian, zeros dropped", dropZeros(basisShells(t, "cc-pvdz-HCO.json", water, false))},
		{"6-31G* (sp shells)", basisShells(t, "6-31gs-HCO.json", water, false)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			eri, err := ComputeERI(t.Context(), tc.shells, NormPerComponent, 2)
			if err != nil {
				t.Fatal(err)
			}
			ps := mustPrepare(tc.shells, NormPerComponent)
			w := newERIWork(2)
			ns := len(ps)
			var worst float64
			for a := range ns {
				for b := 0; b <= a; b++ {
					bp := newShellPair(ps, a, b)
					for c := range ns {
						for d := 0; d <= c; d++ {
							kp := newShellPair(ps, c, d)
							blk := w.quartet(&bp, &kp)
							for i, I := range bp.fi {
								for j, J := range bp.fj {
									for k, K := range kp.fi {
										for l, L := range kp.fj {
											v := blk[((i*bp.n2+j)*kp.n1+k)*kp.n2+l]
											worst = max(worst, math.Abs(eri.At(I, J, K, L)-v))
										}
									}
								}
							}
						}
					}
				}
			}
			if worst > 1e-13 {
				t.Errorf("grouped − shell-by-shell integrals: largest |Δ| %.2e, want ≤ 1e-13", worst)
			}
		})
	}
}
