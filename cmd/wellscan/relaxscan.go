package main

import (
	"fmt"
	"os"
	"path/filepath"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/report"
)

// scanModeLine is the status line that says how points are computed.
func scanModeLine(spec *planner.Spec) string {
	if spec.Relaxed() {
		n := len(spec.Held())
		return fmt.Sprintf("mode: relaxed (every other coordinate optimised at each point; %d coordinate(s) held)", n)
	}
	return "mode: rigid (every other coordinate held at its input value)"
}

func modeOf(in report.Input) string {
	if in.Conditions.ScanKind == "relaxed" {
		return "relaxed"
	}
	return "rigid"
}

// relaxedGeometry reads the optimised geometry of a relaxed point
// (points/<key>/relaxed.xyz, Å) onto a copy of mol.
func relaxedGeometry(dir, key string, mol planner.Molecule) (planner.Molecule, error) {
	path := filepath.Join(runner.PointDir(dir, key), runner.RelaxedFile)
	f, err := os.Open(path)
	if err != nil {
		return mol, fmt.Errorf("relaxed geometry: %w", err)
	}
	defer f.Close()
	frames, err := parsers.ReadXYZ(f, path)
	if err != nil {
		return mol, err
	}
	fr := frames[0]
	if len(fr.Coords) != len(mol.Atoms) {
		return mol, fmt.Errorf("%s: %d atoms, the molecule has %d", path, len(fr.Coords), len(mol.Atoms))
	}
	out := mol.Clone()
	for i := range out.Atoms {
		for k := range 3 {
			out.Atoms[i].Pos[k] = fr.Coords[i][k] / planner.BohrInAngstrom
		}
	}
	return out, nil
}
