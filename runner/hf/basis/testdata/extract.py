#!/usr/bin/env python3
"""Extract the small tables the basis tests need from the neutral JSON
extracts of the Basis Set Exchange data library
(/work/shared/reference/basis/*.json; library commit
4adaf1372c7101620ca1a9f3130be9ae97fb8f30). Run from this directory:

    python3 extract.py /work/shared/reference/basis

It rewrites nbf.txt and numbers.txt. The strings are copied, never
re-formatted."""
import json, sys, os

src = sys.argv[1]
slugs = ["sto-3g", "sto-3g-v0", "3-21g", "6-31g", "6-31gs", "6-31gss",
         "6-311gss", "cc-pvdz", "cc-pvtz", "aug-cc-pvdz"]
# (slug, element) pairs whose every exponent and coefficient goes into
# numbers.txt: light and heavy elements, Fortran-style strings, split sp and
# spd shells, general contractions with zeros, the 6-311G** Ar quirk.
sample = [("sto-3g", "O"), ("sto-3g", "Ga"), ("sto-3g-v0", "H"), ("sto-3g-v0", "O"),
          ("3-21g", "Kr"), ("6-31g", "Na"), ("6-31gs", "C"), ("6-31gss", "H"),
          ("6-311gss", "Ar"), ("6-311gss", "O"), ("cc-pvdz", "O"), ("cc-pvtz", "Cl"),
          ("aug-cc-pvdz", "H")]

here = os.path.dirname(os.path.abspath(__file__))
data = {s: json.load(open(os.path.join(src, s + ".json"))) for s in slugs}
head = ("# Extracted by extract.py from the neutral JSON extracts of the Basis Set Exchange data library\n"
        "# (github.com/MolSSI-BSE/basis_set_exchange, commit 4adaf1372c7101620ca1a9f3130be9ae97fb8f30, BSD-3-Clause).\n")
with open(os.path.join(here, "nbf.txt"), "w") as f:
    f.write(head)
    f.write("# slug element nbf_cartesian nbf_spherical\n")
    for s in slugs:
        for sym, el in data[s]["elements"].items():
            f.write("%s %s %d %d\n" % (s, sym, el["nbf_cartesian"], el["nbf_spherical"]))
with open(os.path.join(here, "numbers.txt"), "w") as f:
    f.write(head)
    f.write("# slug element shell(1-based) l what(e=exponent, cK=coefficient column K) primitive(1-based) text\n")
    for s, sym in sample:
        for i, sh in enumerate(data[s]["elements"][sym]["shells"], 1):
            for j, t in enumerate(sh["exponents"], 1):
                f.write("%s %s %d %d e %d %s\n" % (s, sym, i, sh["l"], j, t))
            for k, col in enumerate(sh["coefficients"], 1):
                for j, t in enumerate(col, 1):
                    f.write("%s %s %d %d c%d %d %s\n" % (s, sym, i, sh["l"], k, j, t))
