"""Read tables with astropy exactly as a user would, and report what it saw.

Used by TestTablesReadByAstropy (cmd/maserpol/tables_test.go): every table
the program writes must open with astropy.table.Table.read(path) and no
format argument (astropy picks ECSV from the .ecsv extension), with the
units and datatypes the program declares. Warnings (e.g. an unknown unit)
are errors.

Usage: python3 astropy_read.py FILE... ; prints one JSON object mapping
each file to {column: [unit or "", numpy dtype kind, number of rows]}.
Needs astropy (Debian: apt-get install python3-astropy).
"""
import json
import sys
import warnings

from astropy.table import Table

warnings.simplefilter("error")
out = {}
for path in sys.argv[1:]:
    t = Table.read(path)
    out[path] = {
        name: [str(t[name].unit) if t[name].unit is not None else "", t[name].dtype.kind, len(t)]
        for name in t.colnames
    }
json.dump(out, sys.stdout)
