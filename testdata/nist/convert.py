#!/usr/bin/python3
"""Convert the NIST StRD one-way ANOVA datasets to allot's compact test format.

    /usr/bin/python3 testdata/nist/convert.py ../shared/reference/nist-anova

For each NAME.dat it writes NAME.txt beside this script: '#' comment lines
naming the source, then 'key value' lines with the certified values, then a
line 'data' and one line per treatment: its label followed by the responses
as decimal text exactly as NIST prints them. The StRD datasets and certified
values are public domain (NIST Statistical Reference Datasets, ANOVA).
"""
import os
import re
import sys

HERE = os.path.dirname(os.path.abspath(__file__))


def convert(path):
    name = os.path.basename(path)[:-4]
    lines = open(path).read().splitlines()
    cert = re.search(r"Certified Values\s+\(lines (\d+) to (\d+)\)", "\n".join(lines))
    data = re.search(r"Data\s+\(lines (\d+) to (\d+)\)", "\n".join(lines))
    c0, c1 = int(cert.group(1)), int(cert.group(2))
    d0, d1 = int(data.group(1)), int(data.group(2))
    out = ["# source: NIST StRD one-way ANOVA dataset %s (%s.dat), certified values lines %d-%d, data lines %d-%d"
           % (name, name, c0, c1, d0, d1), "# public domain; converted by testdata/nist/convert.py"]
    # Scan to the start of the data: in AtmWtAg.dat the residual SD sits one
    # line past the certified range that the header names.
    for line in lines[c0 - 1:d0 - 1]:
        m = re.match(r"\s*Between \S+\s+(\d+)\s+(\S+)\s+(\S+)\s+(\S+)", line)
        if m:
            out += ["between_df " + m.group(1), "between_ss " + m.group(2), "between_ms " + m.group(3),
                    "f " + m.group(4)]
        m = re.match(r"\s*Within \S+\s+(\d+)\s+(\S+)\s+(\S+)", line)
        if m:
            out += ["within_df " + m.group(1), "within_ss " + m.group(2), "within_ms " + m.group(3)]
        m = re.match(r"\s*Certified R-Squared\s+(\S+)", line)
        if m:
            out.append("r2 " + m.group(1))
        m = re.match(r"\s*Standard Deviation\s+(\S+)", line)
        if m:
            out.append("resid_sd " + m.group(1))
    groups = {}
    order = []
    for line in lines[d0 - 1:d1]:
        g, v = line.split()
        if g not in groups:
            groups[g] = []
            order.append(g)
        groups[g].append(v)
    out.append("data")
    for g in order:
        out.append(g + " " + " ".join(groups[g]))
    with open(os.path.join(HERE, name + ".txt"), "w") as f:
        f.write("\n".join(out) + "\n")
    print(name, len(order), "groups", sum(len(v) for v in groups.values()), "observations")


if __name__ == "__main__":
    src = sys.argv[1]
    for fn in sorted(os.listdir(src)):
        if fn.endswith(".dat"):
            convert(os.path.join(src, fn))
