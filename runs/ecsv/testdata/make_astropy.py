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

# The units and datatypes maserpol's tables use (composite units, nan,
# booleans), written by astropy: astropy_units.ecsv.
t = Table()
t["B_mG"] = [25.0, -3000.0] * u.mG
t["TbdOmega_Ksr"] = [1.5e9, float("nan")] * u.K * u.sr
t["factor_ms_per_G"] = [0.5, 12.25] * u.m / (u.G * u.s)
t["pv_per_G"] = [2e-3, -1e-4] / u.G
t["rate"] = [1.0, 5.0] / u.s
t["valid"] = [False, True]
t["q"] = [-1, 1]
t.write("astropy_units.ecsv", format="ascii.ecsv", overwrite=True)
