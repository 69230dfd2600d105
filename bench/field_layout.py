#!/usr/bin/env python3
"""Writes the same samples as a field file and its station file, for bench/run.sh.

    python3 bench/field_layout.py STATION.toml SAMPLES.csv OUT_DIR

From tenmin's own samples CSV (RFC 3339 UTC, commas, decimal points) it writes
OUT_DIR/field.csv: semicolons, decimal commas, local time in Europe/Berlin
written `dd.mm.yyyy HH:MM:SS` and stamped at the end of each sample's second,
and OUT_DIR/field.toml: the station file with the [input] table that reads it.
The replay of the two gives the same records (bench/run.sh checks it), so the
comparison times the reader alone. Invented layout; the conversion uses the
fixed offset of winter time (+01:00, EU Directive 2000/84/EC), valid for the
demo's January days.
"""

import sys
from datetime import datetime, timedelta
from pathlib import Path


def main():
    station, samples, out = Path(sys.argv[1]), Path(sys.argv[2]), Path(sys.argv[3])
    text = station.read_text()
    layout = (
        '[input]\ndelimiter = ";"\ndecimal = ","\n\n[input.time]\n'
        'column = "Datum Zeit"\nformat = "%d.%m.%Y %H:%M:%S"\n'
        'zone = "Europe/Berlin"\nlabel = "end"\n\n[station]'
    )
    (out / "field.toml").write_text(text.replace("[station]", layout, 1))
    shift = timedelta(hours=1, seconds=1)
    with samples.open() as src, (out / "field.csv").open("w") as dst:
        header = src.readline().rstrip("\n").split(",")
        dst.write("Datum Zeit;" + ";".join(header[1:]) + "\n")
        for line in src:
            f = line.rstrip("\n").split(",")
            t = datetime.strptime(f[0], "%Y-%m-%dT%H:%M:%SZ") + shift
            rest = ";".join(x.replace(".", ",") for x in f[1:])
            dst.write(t.strftime("%d.%m.%Y %H:%M:%S") + ";" + rest + "\n")


if __name__ == "__main__":
    main()
