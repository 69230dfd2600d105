#!/usr/bin/env python3
# Outside reference for the records' numbers (host-cli/src/records.rs): each number field of
# a records CSV must be the shortest decimal that reads back to the same double (Python's repr,
# David Gay's shortest round-trip; checked with Python 3.11.7), written without an exponent and
# without ".0", as Rust's `{}` prints an f64.   python3 bench/records_numbers.py RECORDS.csv ...
# A double exactly halfway between two shortest decimals (`may_tie` in records.rs; none in the
# demo's records) prints as `{}` rounds it, which may differ from repr's even last digit.
import csv, sys
from decimal import Decimal
def plain(x):
    r = repr(x)
    d = Decimal(r)
    s = format(d, 'f')
    if '.' in s:
        s = s.rstrip('0').rstrip('.')
    if s == '-0' or (x == 0 and str(x).startswith('-')):
        return '-0'
    return s
num = ['mean','sd','min','max','gust','ti','resultant_length','resultant_speed','resultant_direction']
n = bad = 0
for path in sys.argv[1:]:
    for row in csv.DictReader(open(path)):
        for k in num:
            v = row[k]
            if v == '':
                continue
            n += 1
            if plain(float(v)) != v:
                bad += 1
                if bad < 5: print('differs', k, v, plain(float(v)))
print(f"{n} numbers, {bad} differ from Python repr (shortest round-trip), python {sys.version.split()[0]}")
sys.exit(1 if bad else 0)
