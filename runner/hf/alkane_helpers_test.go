package hf_test

import (
	"math"
	"testing"

	"wellscan/planner"
)

// alkane is our own all-anti CnH2n+2 (not an experimental structure): C–C
// 1.54 Å, C–H 1.09 Å, tetrahedral angles (common practice), the carbon
// zigzag in the xy plane; in bohr.
func alkane(tb testing.TB, n int) planner.Molecule {
	tb.Helper()
	c, h := mustElement(tb, "C"), mustElement(tb, "H")
	const half = 54.7356 * math.Pi / 180 // half the tetrahedral angle
	cc, ch := 1.54/planner.BohrInAngstrom, 1.09/planner.BohrInAngstrom
	dx, dy := cc*math.Sin(half), cc*math.Cos(half)
	var atoms []planner.Atom
	for i := range n {
		up := 1.0
		if i%2 == 0 {
			up = -1
		}
		pos := [3]float64{float64(i) * dx, 0, 0}
		if up > 0 {
			pos[1] = dy
		}
		atoms = append(atoms, planner.NewAtom(c, pos))
		// Two hydrogens out of the plane, away from the chain's bend.
		for _, z := range []float64{-1, 1} {
			atoms = append(atoms, planner.NewAtom(h, [3]float64{pos[0], pos[1] + up*ch*math.Cos(half), pos[2] + z*ch*math.Sin(half)}))
		}
		if i == 0 || i == n-1 {
			sx := -1.0
			if i == n-1 {
				sx = 1
			}
			if n == 1 {
				atoms = append(atoms, planner.NewAtom(h, [3]float64{-ch * math.Sin(half), pos[1] - up*ch*math.Cos(half), 0}))
				sx = 1
			}
			atoms = append(atoms, planner.NewAtom(h, [3]float64{pos[0] + sx*ch*math.Sin(half), pos[1] - up*ch*math.Cos(half), 0}))
		}
	}
	mol, err := planner.NewMolecule(atoms, 0, 1)
	if err != nil {
		tb.Fatal(err)
	}
	return mol
}
