# morse.awk: a toy "electronic-structure program" for wellscan's tests and
# demos. It reads an input of the invented form written by morse.tmpl
# ("atom SYMBOL X Y Z" lines, in angstrom), takes the distance between the
# first two atoms, and prints the energy of a Morse potential in eV in an
# output layout invented for wellscan:
#
#   E(r) = E0 + De * (1 - exp(-a (r - re)))^2
#
# The parameters are invented for the demo (no real molecule):
#   E0 = -3050 eV, De = 4.6 eV, a = 2.1 / angstrom, re = 1.13 angstrom.
# Morse form: P. M. Morse, Phys. Rev. 34, 57 (1929), doi:10.1103/PhysRev.34.57.
# Run: awk -f morse.awk INPUT
BEGIN { n = 0; E0 = -3050.0; De = 4.6; a = 2.1; re = 1.13 }
$1 == "atom" { n++; x[n] = $3 + 0; y[n] = $4 + 0; z[n] = $5 + 0 }
END {
    if (n < 2) { print "morse-well: need two atoms, found " n > "/dev/stderr"; exit 2 }
    dx = x[2] - x[1]; dy = y[2] - y[1]; dz = z[2] - z[1]
    r = sqrt(dx * dx + dy * dy + dz * dz)
    q = 1 - exp(-a * (r - re))
    e = E0 + De * q * q
    print "~~ morse-well toy 1.0 ~~"
    printf "bond length / angstrom : %.10f\n", r
    printf "well energy / eV : %.15e\n", e
    print "~~ done ~~"
}
