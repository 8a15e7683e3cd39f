#!/usr/bin/env python3
"""Convert a reference basis.json (neutral schema, see README.md) into the
wellscan basis format, numbers unchanged. Used once to make the test bases
here; kept so the conversion can be repeated."""
import json, sys
L = "spdfghik"
src, title, harm = sys.argv[1], sys.argv[2], sys.argv[3]
d = json.load(open(src))
out = ["wellscan-basis 1", "title " + title, "about " + d["name"].replace("\n", " "), "harmonics " + harm,
       "origin " + src.split("/reference/")[-1]]
for el, e in d["elements"].items():
    out.append("")
    out.append("element " + el)
    for sh in e["shells"]:
        for col in sh["coefficients"]:
            out.append("shell " + L[sh["l"]])
            for x, c in zip(sh["exponents"], col):
                out.append("  %s  %s" % (x, c))
print("\n".join(out))
