package hf

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Orbitals are molecular orbitals over a basis of NBasis functions:
// coefficient matrices whose columns are the MOs in ascending orbital
// energy, with their energies and occupation numbers (0 or 1 per spin
// orbital). For a restricted set only the α fields are used and the β
// fields are nil.
type Orbitals struct {
	NBasis     int
	Restricted bool
	// CAlpha and CBeta are NBasis × NMO.
	CAlpha, CBeta *mat.Dense
	// Orbital energies (hartree) and occupations, length NMO each.
	EnergiesAlpha, EnergiesBeta []float64
	OccAlpha, OccBeta           []float64
}

// NMO returns the number of molecular orbitals (columns).
func (o *Orbitals) NMO() int {
	if o == nil || o.CAlpha == nil {
		return 0
	}
	_, c := o.CAlpha.Dims()
	return c
}

// Beta returns the β coefficients: CBeta, or CAlpha for a restricted set.
func (o *Orbitals) Beta() *mat.Dense {
	if o.Restricted {
		return o.CAlpha
	}
	return o.CBeta
}

// Validate checks that the dimensions agree with each other.
func (o *Orbitals) Validate() error {
	if o == nil || o.CAlpha == nil {
		return errors.New("hf: orbitals: no α coefficients")
	}
	r, c := o.CAlpha.Dims()
	if r != o.NBasis || c < 1 || c > o.NBasis {
		return fmt.Errorf("hf: orbitals: α coefficients are %d×%d, want %d×k with 1 ≤ k ≤ %d", r, c, o.NBasis, o.NBasis)
	}
	if len(o.EnergiesAlpha) != c || len(o.OccAlpha) != c {
		return fmt.Errorf("hf: orbitals: %d α energies and %d occupations for %d orbitals", len(o.EnergiesAlpha), len(o.OccAlpha), c)
	}
	if o.Restricted {
		if o.CBeta != nil || o.EnergiesBeta != nil || o.OccBeta != nil {
			return errors.New("hf: orbitals: restricted set has β fields")
		}
		return nil
	}
	if o.CBeta == nil {
		return errors.New("hf: orbitals: unrestricted set has no β coefficients")
	}
	if rb, cb := o.CBeta.Dims(); rb != r || cb != c {
		return fmt.Errorf("hf: orbitals: β coefficients are %d×%d, α are %d×%d", rb, cb, r, c)
	}
	if len(o.EnergiesBeta) != c || len(o.OccBeta) != c {
		return fmt.Errorf("hf: orbitals: %d β energies and %d occupations for %d orbitals", len(o.EnergiesBeta), len(o.OccBeta), c)
	}
	return nil
}

// Orbital file format (all little-endian):
//
//	[8]byte  magic "WSCNORB1"
//	uint32   flags (bit 0: restricted)
//	uint32   NBasis
//	uint32   NMO
//	per spin (α, then β unless restricted):
//	  float64 × NBasis·NMO   coefficients, row-major (basis function major)
//	  float64 × NMO          orbital energies
//	  float64 × NMO          occupations
//	uint32   CRC-32 (IEEE) of everything before it
const orbitalsMagic = "WSCNORB1"

// maxOrbitalBasis bounds the dimension accepted from a file, so that a
// corrupt header cannot make ReadOrbitals expect gigabytes.
const maxOrbitalBasis = 20000

// WriteOrbitals writes o in the binary orbital format above.
func WriteOrbitals(w io.Writer, o *Orbitals) error {
	if err := o.Validate(); err != nil {
		return fmt.Errorf("hf: write orbitals: %w", err)
	}
	n, k := o.NBasis, o.NMO()
	nspin := 2
	var flags uint32
	if o.Restricted {
		nspin, flags = 1, 1
	}
	buf := make([]byte, 0, 8+12+nspin*8*(n*k+2*k)+4)
	buf = append(buf, orbitalsMagic...)
	buf = binary.LittleEndian.AppendUint32(buf, flags)
	buf = binary.LittleEndian.AppendUint32(buf, uint32(n))
	buf = binary.LittleEndian.AppendUint32(buf, uint32(k))
	put := func(v float64) { buf = binary.LittleEndian.AppendUint64(buf, math.Float64bits(v)) }
	spins := []struct {
		c        *mat.Dense
		eps, occ []float64
	}{{o.CAlpha, o.EnergiesAlpha, o.OccAlpha}, {o.CBeta, o.EnergiesBeta, o.OccBeta}}
	for _, s := range spins[:nspin] {
		for i := range n {
			for j := range k {
				put(s.c.At(i, j))
			}
		}
		for _, v := range s.eps {
			put(v)
		}
		for _, v := range s.occ {
			put(v)
		}
	}
	buf = binary.LittleEndian.AppendUint32(buf, crc32.ChecksumIEEE(buf))
	if _, err := w.Write(buf); err != nil {
		return fmt.Errorf("hf: write orbitals: %w", err)
	}
	return nil
}

// ReadOrbitals reads an orbital file written by WriteOrbitals. It checks
// the magic header, the dimensions, the length and the checksum.
func ReadOrbitals(r io.Reader) (*Orbitals, error) {
	head := make([]byte, 20)
	nm, err := io.ReadFull(r, head[:8])
	if err != nil && nm == 0 {
		return nil, fmt.Errorf("hf: read orbitals: header: %w", err)
	}
	if string(head[:8]) != orbitalsMagic {
		return nil, fmt.Errorf("hf: read orbitals: bad magic %q, want %q (not an orbital file)", head[:nm], orbitalsMagic)
	}
	if _, err := io.ReadFull(r, head[8:]); err != nil {
		return nil, fmt.Errorf("hf: read orbitals: header: %w", err)
	}
	flags := binary.LittleEndian.Uint32(head[8:])
	n := int(binary.LittleEndian.Uint32(head[12:]))
	k := int(binary.LittleEndian.Uint32(head[16:]))
	if flags&^1 != 0 {
		return nil, fmt.Errorf("hf: read orbitals: unknown flags %#x", flags)
	}
	if n < 1 || n > maxOrbitalBasis || k < 1 || k > n {
		return nil, fmt.Errorf("hf: read orbitals: dimensions NBasis %d, NMO %d: want 1 ≤ NMO ≤ NBasis ≤ %d", n, k, maxOrbitalBasis)
	}
	restricted := flags&1 != 0
	nspin := 2
	if restricted {
		nspin = 1
	}
	want := nspin*8*(n*k+2*k) + 4
	// ReadAll grows with the data actually present, so a lying header
	// costs no more memory than the file itself.
	body, err := io.ReadAll(io.LimitReader(r, int64(want)+1))
	if err != nil {
		return nil, fmt.Errorf("hf: read orbitals: %w", err)
	}
	if len(body) != want {
		return nil, fmt.Errorf("hf: read orbitals: body is %d bytes, want %d for NBasis %d, NMO %d (truncated or trailing data)", len(body), want, n, k)
	}
	all := append(bytes.Clone(head), body[:want-4]...)
	if got, sum := crc32.ChecksumIEEE(all), binary.LittleEndian.Uint32(body[want-4:]); got != sum {
		return nil, fmt.Errorf("hf: read orbitals: checksum %08x, file says %08x (corrupt file)", got, sum)
	}
	p := body
	get := func() float64 {
		v := math.Float64frombits(binary.LittleEndian.Uint64(p))
		p = p[8:]
		return v
	}
	o := &Orbitals{NBasis: n, Restricted: restricted}
	for s := range nspin {
		c := mat.NewDense(n, k, nil)
		for i := range n {
			for j := range k {
				v := get()
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return nil, fmt.Errorf("hf: read orbitals: coefficient (%d, %d) of spin %d is %g", i, j, s, v)
				}
				c.Set(i, j, v)
			}
		}
		eps, occ := make([]float64, k), make([]float64, k)
		for j := range eps {
			eps[j] = get()
		}
		for j := range occ {
			occ[j] = get()
			if !(occ[j] >= 0 && occ[j] <= 1) {
				return nil, fmt.Errorf("hf: read orbitals: occupation %d of spin %d is %g, want 0…1", j, s, occ[j])
			}
		}
		if s == 0 {
			o.CAlpha, o.EnergiesAlpha, o.OccAlpha = c, eps, occ
		} else {
			o.CBeta, o.EnergiesBeta, o.OccBeta = c, eps, occ
		}
	}
	return o, nil
}
