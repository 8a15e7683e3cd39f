package hf

import (
	"bytes"
	"encoding/binary"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func sampleOrbitals(restricted bool) *Orbitals {
	n, k := 4, 3
	o := &Orbitals{NBasis: n, Restricted: restricted, CAlpha: mat.NewDense(n, k, nil),
		EnergiesAlpha: []float64{-1.5, -0.25, 0.75}, OccAlpha: []float64{1, 1, 0}}
	for i := range n {
		for j := range k {
			o.CAlpha.Set(i, j, float64(i)-0.5*float64(j)+1e-17*float64(i*j))
		}
	}
	if !restricted {
		o.CBeta = mat.DenseCopyOf(o.CAlpha)
		o.CBeta.Scale(-1, o.CBeta)
		o.EnergiesBeta = []float64{-1.25, 0.5, 1}
		o.OccBeta = []float64{1, 0, 0}
	}
	return o
}

func TestWriteOrbitals_RoundTrip_Exact(t *testing.T) {
	for _, restricted := range []bool{true, false} {
		o := sampleOrbitals(restricted)
		var buf bytes.Buffer
		if err := WriteOrbitals(&buf, o); err != nil {
			t.Fatal(err)
		}
		got, err := ReadOrbitals(&buf)
		if err != nil {
			t.Fatal(err)
		}
		// Bit-exact: the format stores IEEE-754 doubles verbatim (deliberate determinism check).
		if !mat.Equal(got.CAlpha, o.CAlpha) || got.NBasis != o.NBasis || got.Restricted != restricted ||
			!equalSlices(got.EnergiesAlpha, o.EnergiesAlpha) || !equalSlices(got.OccAlpha, o.OccAlpha) {
			t.Errorf("restricted=%v: α part differs after round trip", restricted)
		}
		if !restricted && (!mat.Equal(got.CBeta, o.CBeta) || !equalSlices(got.EnergiesBeta, o.EnergiesBeta) || !equalSlices(got.OccBeta, o.OccBeta)) {
			t.Error("β part differs after round trip")
		}
		if restricted && (got.CBeta != nil || got.Beta() != got.CAlpha) {
			t.Error("restricted set read back with β fields")
		}
	}
}

func equalSlices(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestReadOrbitals_BadFiles_Errors(t *testing.T) {
	var good bytes.Buffer
	if err := WriteOrbitals(&good, sampleOrbitals(false)); err != nil {
		t.Fatal(err)
	}
	g := good.Bytes()
	mod := func(f func(b []byte) []byte) []byte { return f(bytes.Clone(g)) }
	tests := []struct {
		name, data, want string
	}{
		{"empty", "", "header"},
		{"foreign file", "{\"orbitals\": []}\n", "bad magic"},
		{"truncated", string(g[:len(g)-9]), "truncated"},
		{"trailing data", string(g) + "x", "trailing"},
		{"flipped bit", string(mod(func(b []byte) []byte { b[40] ^= 1; return b })), "checksum"},
		{"huge dimension", string(mod(func(b []byte) []byte { binary.LittleEndian.PutUint32(b[12:], 1<<30); return b })), "dimensions"},
		{"more MOs than functions", string(mod(func(b []byte) []byte { binary.LittleEndian.PutUint32(b[16:], 5); return b })), "dimensions"},
		{"unknown flags", string(mod(func(b []byte) []byte { b[8] = 6; return b })), "flags"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			o, err := ReadOrbitals(strings.NewReader(tc.data))
			if err == nil || o != nil || !strings.Contains(err.Error(), tc.want) || !strings.HasPrefix(err.Error(), "hf: ") {
				t.Errorf("ReadOrbitals = %v, %v; want an \"hf: …%s…\" error", o, err, tc.want)
			}
		})
	}
}

func TestWriteOrbitals_Invalid_Errors(t *testing.T) {
	o := sampleOrbitals(true)
	o.OccAlpha = o.OccAlpha[:2]
	if err := WriteOrbitals(&bytes.Buffer{}, o); err == nil {
		t.Error("WriteOrbitals accepted mismatched occupations")
	}
}

// FuzzReadOrbitals: never panic; anything accepted is valid and round-trips.
func FuzzReadOrbitals(f *testing.F) {
	for _, r := range []bool{true, false} {
		var buf bytes.Buffer
		if err := WriteOrbitals(&buf, sampleOrbitals(r)); err != nil {
			f.Fatal(err)
		}
		f.Add(buf.Bytes())
	}
	f.Add([]byte(orbitalsMagic))
	f.Fuzz(func(t *testing.T, data []byte) {
		o, err := ReadOrbitals(bytes.NewReader(data))
		if err != nil {
			return
		}
		if err := o.Validate(); err != nil {
			t.Fatalf("accepted invalid orbitals: %v", err)
		}
		var buf bytes.Buffer
		if err := WriteOrbitals(&buf, o); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(buf.Bytes(), data) {
			t.Fatal("round trip changed the bytes")
		}
	})
}
