#!/usr/bin/env python3
"""Writes variants of the declared layout's field file, for bench/compare.sh.

    python3 bench/layout_variants.py FIELD_DIR

From FIELD_DIR/field.csv and field.toml (bench/field_layout.py) it writes, each
with its station file:

- field-q: a quality code after the first channel's value (column `q`, good
  code `0`; every thousandth row `3`, so that reading flagged);
- field-2t: the time in two columns, `Datum;Zeit`;
- field-w: the time in two columns and the fields separated by one space
  (`delimiter = "whitespace"`), an empty field written `NAN` (whitespace
  cannot hold an empty field; both read as missing);
- field-f: a table shared by two masts, a `mast` column first, each row of
  mast `M1` (the samples) after one of mast `M2` (the same readings), and
  `filter = { column = "mast", value = "M1" }`: twice the rows for the same
  records.

The 2t, w and f files replay to the records of field.csv (bench/compare.sh
checks it); q's differ by its flagged readings. Invented layouts for timing
only.
"""

import sys
from pathlib import Path


def main():
    d = Path(sys.argv[1])
    toml = (d / "field.toml").read_text()
    with (d / "field.csv").open() as src, (d / "field-q.csv").open("w") as q, (
        d / "field-2t.csv"
    ).open("w") as t2, (d / "field-w.csv").open("w") as w, (d / "field-f.csv").open("w") as f2:
        header = src.readline().rstrip("\n").split(";")
        q.write(";".join(header[:2] + ["q"] + header[2:]) + "\n")
        t2.write(";".join(["Datum", "Zeit"] + header[1:]) + "\n")
        w.write(" ".join(["Datum", "Zeit"] + header[1:]) + "\n")
        f2.write(";".join(["mast"] + header) + "\n")
        for i, line in enumerate(src):
            f2.write("M2;" + line + "M1;" + line)
            f = line.rstrip("\n").split(";")
            code = "3" if i % 1000 == 999 else "0"
            q.write(";".join(f[:2] + [code] + f[2:]) + "\n")
            day, clock = f[0].split(" ")
            t2.write(";".join([day, clock] + f[1:]) + "\n")
            w.write(" ".join([day, clock] + [x if x else "NAN" for x in f[1:]]) + "\n")
    first = toml.index("[[channel]]")
    at = toml.index("\n", toml.index("id = ", first))
    quality = '\nquality = { column = "q", good = ["0"] }'
    (d / "field-q.toml").write_text(toml[:at] + quality + toml[at:])
    two = toml.replace('column = "Datum Zeit"', 'columns = ["Datum", "Zeit"]')
    (d / "field-2t.toml").write_text(two)
    (d / "field-w.toml").write_text(two.replace('delimiter = ";"', 'delimiter = "whitespace"'))
    masts = 'delimiter = ";"\nfilter = { column = "mast", value = "M1" }'
    (d / "field-f.toml").write_text(toml.replace('delimiter = ";"', masts))


if __name__ == "__main__":
    main()
