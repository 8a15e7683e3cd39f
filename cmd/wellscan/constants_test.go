package main

import (
	"testing"

	"wellscan/fit"
	"wellscan/parsers"
)

// TestConstants_OneSource holds parsers' copy of the CODATA 2018 factors
// to fit/constants.go, the program's one source: parsers imports no other
// wellscan package (the layering test), so it carries the few it needs,
// and this test fails the moment the two differ by one bit.
func TestConstants_OneSource(t *testing.T) {
	for _, c := range []struct {
		name         string
		parsers, fit float64
	}{
		{"HartreeInEV", parsers.HartreeInEV, fit.HartreeInEV},
		{"HartreeInKJPerMol", parsers.HartreeInKJPerMol, fit.HartreeInKJPerMol},
		{"HartreeInKcalPerMol", parsers.HartreeInKcalPerMol, fit.HartreeInKcalPerMol},
		{"HartreeInCm1", parsers.HartreeInCm1, fit.HartreeInCm1},
		{"BohrInAngstrom", parsers.BohrInAngstrom, fit.BohrInAngstrom},
	} {
		if c.parsers != c.fit {
			t.Errorf("parsers.%s = %v, fit.%s = %v: one fact, two values", c.name, c.parsers, c.name, c.fit)
		}
	}
}
