#!/usr/bin/python3
"""Write astropy.ecsv and astropy_comma.ecsv with astropy (Debian python3-astropy 5.2).

These are reference files for the Go ECSV reader: the writer here is
astropy's own, so the reader is checked against an outside implementation
of the ECSV 1.0 standard. Run: /usr/bin/python3 make_astropy.py
"""
import astropy
import astropy.units as u
from astropy.table import Table

t = Table()
t["velocity"] = [-1.25, 0.0, 2.5] * u.km / u.s
t["velocity"].description = "LSR velocity, radio convention"
t["I"] = [0.5, 12.0, 1e-3] * u.K
t["I"].description = "Stokes I: brightness temperature"
t["label"] = ["edge", "peak: main", "two words"]
t["valid"] = [True, False, True]
t["n"] = [1, 2, 3]
t.meta["source"] = "Hydra W4"
t.meta["note"] = "invented test data, astropy " + astropy.__version__
t.write("astropy.ecsv", format="ascii.ecsv", overwrite=True)
t.write("astropy_comma.ecsv", format="ascii.ecsv", delimiter=",", overwrite=True)
