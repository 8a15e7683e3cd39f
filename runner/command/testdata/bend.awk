# bend.awk: a toy "program" with analytic forces, for wellscan's tests of
# relaxed scans through external programs. It reads "atom SYMBOL X Y Z"
# lines (angstrom) as written by morse.tmpl for a triatomic A–B–C with
# atom 1 in the middle, and prints, in a layout invented for wellscan,
#
#   E = E0 + kr/2 [(r12 − r0)² + (r13 − r0)²] + kt/2 (θ − θ0)²
#
# in eV (r in Å, θ = angle 2–1–3 in radians) and the forces −dE/dx in
# eV/Å. The constants are invented (no real molecule):
#   E0 = -2000 eV, kr = 40 eV/Å², r0 = 0.96 Å, kt = 4 eV/rad², θ0 = 104°.
# Run: awk -f bend.awk INPUT
BEGIN { n = 0; E0 = -2000.0; kr = 40.0; r0 = 0.96; kt = 4.0; t0 = 104.0 * atan2(0, -1) / 180 }
$1 == "atom" { n++; s[n] = $2; x[n] = $3 + 0; y[n] = $4 + 0; z[n] = $5 + 0 }
END {
    if (n != 3) { print "bend: need three atoms, found " n > "/dev/stderr"; exit 2 }
    for (k = 1; k <= 3; k++) { gx[k] = 0; gy[k] = 0; gz[k] = 0 }
    e = E0
    for (j = 2; j <= 3; j++) {
        ux = x[j] - x[1]; uy = y[j] - y[1]; uz = z[j] - z[1]
        r = sqrt(ux * ux + uy * uy + uz * uz)
        e += 0.5 * kr * (r - r0) ^ 2
        f = kr * (r - r0) / r
        gx[j] += f * ux; gy[j] += f * uy; gz[j] += f * uz
        gx[1] -= f * ux; gy[1] -= f * uy; gz[1] -= f * uz
    }
    ux = x[2] - x[1]; uy = y[2] - y[1]; uz = z[2] - z[1]
    vx = x[3] - x[1]; vy = y[3] - y[1]; vz = z[3] - z[1]
    lu = sqrt(ux * ux + uy * uy + uz * uz); lv = sqrt(vx * vx + vy * vy + vz * vz)
    c = (ux * vx + uy * vy + uz * vz) / (lu * lv)
    if (c > 1) c = 1
    if (c < -1) c = -1
    sn = sqrt(1 - c * c)
    th = atan2(sn, c)
    e += 0.5 * kt * (th - t0) ^ 2
    d = kt * (th - t0) / sn
    # dθ/dx2 = (c û − v̂)/(|u| sin θ), dθ/dx3 = (c v̂ − û)/(|v| sin θ)
    ax = (c * ux / lu - vx / lv) / lu; ay = (c * uy / lu - vy / lv) / lu; az = (c * uz / lu - vz / lv) / lu
    bx = (c * vx / lv - ux / lu) / lv; by = (c * vy / lv - uy / lu) / lv; bz = (c * vz / lv - uz / lu) / lv
    gx[2] += d * ax; gy[2] += d * ay; gz[2] += d * az
    gx[3] += d * bx; gy[3] += d * by; gz[3] += d * bz
    gx[1] -= d * (ax + bx); gy[1] -= d * (ay + by); gz[1] -= d * (az + bz)
    printf "bend toy energy / eV : %.16g\n", e
    print "forces (eV/Angstrom)"
    for (k = 1; k <= 3; k++) printf "%d %s %.16g %.16g %.16g\n", k, s[k], -gx[k], -gy[k], -gz[k]
}
