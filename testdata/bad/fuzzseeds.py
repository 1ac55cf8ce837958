#!/usr/bin/env python3
"""Writes the committed seed corpora of the fuzz tests from the bad-input
corpus here and the good inputs of the repository:
  config/testdata/fuzz/FuzzParse, levels/species/testdata/fuzz/FuzzParse,
  runs/interpret/testdata/fuzz/FuzzParseObserved, config/units/testdata/fuzz/FuzzParse.
Run from this directory after gen.py: python3 fuzzseeds.py."""
import glob, os, shutil

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.normpath(os.path.join(HERE, "..", ".."))

def lit(b):
    out = []
    for c in b:
        if c == 0x22: out.append('\\"')
        elif c == 0x5c: out.append('\\\\')
        elif c == 0x0a: out.append('\\n')
        elif c == 0x09: out.append('\\t')
        elif 0x20 <= c < 0x7f: out.append(chr(c))
        else: out.append('\\x%02x' % c)
    return '"' + ''.join(out) + '"'

def corpus(pkg, target, entries):
    d = os.path.join(ROOT, pkg, "testdata", "fuzz", target)
    shutil.rmtree(d, ignore_errors=True)
    os.makedirs(d)
    for name, values in entries:
        with open(os.path.join(d, name), "w") as f:
            f.write("go test fuzz v1\n")
            for v in values:
                f.write(v + "\n")

def files(pattern):
    for p in sorted(glob.glob(pattern)):
        with open(p, "rb") as f:
            yield os.path.splitext(os.path.basename(p))[0], f.read()

cfgs = [(n, ["[]byte(" + lit(b) + ")"]) for n, b in files(os.path.join(HERE, "config", "*.toml"))]
cfgs += [("good-" + n, ["[]byte(" + lit(b) + ")"]) for n, b in files(os.path.join(ROOT, "cmd", "maserpol", "demo", "*.toml"))]
corpus("config", "FuzzParse", cfgs)
sps = [(n, ["[]byte(" + lit(b) + ")"]) for n, b in files(os.path.join(HERE, "species", "*.toml"))]
sps += [("preset-" + n, ["[]byte(" + lit(b) + ")"]) for n, b in files(os.path.join(ROOT, "levels", "species", "presets", "*.toml"))]
corpus(os.path.join("levels", "species"), "FuzzParse", sps)
obs = [(n, ["[]byte(" + lit(b) + ")", 'string("IQUV")']) for n, b in files(os.path.join(HERE, "observed", "*.csv"))]
obs += [("good-" + n, ["[]byte(" + lit(b) + ")", 'string("IV")']) for n, b in files(os.path.join(ROOT, "testdata", "observed", "*.ecsv"))]
corpus(os.path.join("runs", "interpret"), "FuzzParseObserved", obs)
words = ["30 mG", "1e400 G", "-0 deg", ".5 km/s", "5.e3 K", "1e-2sr", "3 G G", "1 au", "nan", "+inf K", "0x1p3 G", "1,5 G", "1 s^-1", "40 %", "1 deg2", "2 arcsec2"]
corpus(os.path.join("config", "units"), "FuzzParse", [("seed%02d" % i, ["string(" + lit(w.encode()) + ")", "uint8(%d)" % (i % 11)]) for i, w in enumerate(words)])
print("corpora written")
