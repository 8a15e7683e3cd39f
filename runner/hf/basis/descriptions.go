package basis

// descriptions are wellscan's own one-line descriptions of the embedded
// sets, keyed by slug: what a user choosing a set needs to know, in our
// words. The data files' "about" lines come with the source data and are
// kept there as data; [Set.Description] and [List] show these instead.
var descriptions = map[string]string{
	"sto-3g":      "minimal: one function per atomic orbital, each fitted with three Gaussians; for quick looks, not for numbers",
	"sto-3g-v0":   "the minimal three-Gaussian set in an earlier 8-digit transcription, kept for the published worked example",
	"3-21g":       "small split valence: three-Gaussian cores, valence orbitals split into two and one Gaussians",
	"6-31g":       "split valence: six-Gaussian cores, valence orbitals split into three and one Gaussians",
	"6-31gs":      "6-31G with a set of d functions on every atom from lithium on (polarised heavy atoms)",
	"6-31gss":     "6-31G* with a set of p functions on hydrogen and helium as well",
	"6-311gss":    "valence split three ways, with d functions on heavy atoms and p functions on hydrogen",
	"cc-pvdz":     "double zeta built for correlated methods: valence split in two plus one polarisation shell per step in l",
	"cc-pvtz":     "triple zeta built for correlated methods: valence split in three plus d and f polarisation on heavy atoms",
	"aug-cc-pvdz": "cc-pVDZ plus one diffuse shell per angular momentum, for anions, dipoles and weakly bound pairs",
	"cc-pvqz":     "quadruple zeta built for correlated methods: valence split in four plus d, f and g polarisation on heavy atoms",
	"aug-cc-pvtz": "cc-pVTZ plus one diffuse shell per angular momentum, for anions, dipoles and weakly bound pairs",
	"cc-pcvtz":    "cc-pVTZ plus tight shells on Li–Ar that let the core electrons correlate; H and He as in cc-pVTZ",
}
