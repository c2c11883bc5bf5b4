#!/usr/bin/env python3
"""Write the fixed-width twin of a generated benchmark file, and its codebook.

    python3 bench/to_fixed.py bench/out/data-N.csv bench/out

Reads data-N.csv twice (standard library only, streaming): once for each column's widest
value, once to write data-N.txt with every field left-aligned in its width and one space
between fields. Writes codebook-fixed.toml: bench/out/codebook.toml with `layout = "fixed"`
and each variable's `columns`. The same cells, so the same findings as the CSV, but for
line breaks inside the text note, which become spaces.
"""
import csv
import os
import re
import sys


def main(source, out):
    with open(source, newline="", encoding="utf-8") as f:
        rows = csv.reader(f)
        header = next(rows)
        widths = [0] * len(header)
        for row in rows:
            for i, value in enumerate(row):
                widths[i] = max(widths[i], len(value))
    starts, pos = [], 1
    for width in widths:
        starts.append(pos)
        pos += width + 1
    target = re.sub(r"\.csv$", ".txt", os.path.join(out, os.path.basename(source)))
    with open(source, newline="", encoding="utf-8") as f, open(
        target, "w", newline="\n", encoding="utf-8"
    ) as t:
        rows = csv.reader(f)
        next(rows)
        for row in rows:
            cells = (v.replace("\r", " ").replace("\n", " ").ljust(w) for v, w in zip(row, widths))
            t.write(" ".join(cells) + "\n")
    with open(os.path.join(out, "codebook.toml"), encoding="utf-8") as f:
        codebook = f.read()
    codebook = codebook.replace(
        'layout = "delimited"\ndelimiter = ","\nheader = true', 'layout = "fixed"\nheader = false'
    )
    lines, previous = [], ""
    for line in codebook.split("\n"):
        lines.append(line)
        m = re.match(r'^name = "(.*)"$', line)
        if m and previous == "[[variables]]":
            i = header.index(m.group(1))
            lines.append(f"columns = {{ start = {starts[i]}, end = {starts[i] + widths[i] - 1} }}")
        previous = line
    with open(os.path.join(out, "codebook-fixed.toml"), "w", encoding="utf-8") as f:
        f.write("\n".join(lines))


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
