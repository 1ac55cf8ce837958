#!/usr/bin/env python3
"""Writes the regression corpus of bad inputs (testdata/bad/) and
expect.tsv: for every file the key (or column) and line its message must
name. Run from this directory: python3 gen.py. Each case is a valid base
file with one line replaced, added or removed, so the line of the fault is
known by construction. cmd/maserpol/bad_test.go runs them."""
import os, shutil

HERE = os.path.dirname(os.path.abspath(__file__))

CONFIG = """name = "bad"
species = "sio-v1-j1-0"
[field]
strength = "30 G"
theta = "90 deg"
chi = "0 deg"
[line]
doppler = "1 km/s"
channels = 64
[rates]
gamma_upper = "1 s^-1"
gamma_lower = "1 s^-1"
[beam]
solid_angle = "0.01 sr"
[pump]
kind = "isotropic"
[seed]
tb = "2.725 K"
[column]
saturation = 100.0
[output]
plots = false
""".splitlines()

# line number (1-based) of each key in CONFIG
CLINE = {}
table = ""
for i, l in enumerate(CONFIG, 1):
    if l.startswith("["):
        table = l.strip("[]")
        CLINE[table] = i
        continue
    k = l.split("=")[0].strip()
    CLINE[(table + "." + k) if table else k] = i

def cfg_replace(key, text):
    out = list(CONFIG)
    out[CLINE[key] - 1] = text
    return out

def cfg_after(key, text):
    out = list(CONFIG)
    out.insert(CLINE[key], text)
    return out, CLINE[key] + 1

configs = []  # (name, lines, key, line, contains)

def rep(name, key, value, contains="", want_key=None, want_line=None):
    short = key.split(".")[-1]
    configs.append((name, cfg_replace(key, f"{short} = {value}"), want_key or key, want_line or CLINE[key], contains))

# Every numeric quantity key: wrong forms.
quantities = {
    "field.strength": ("G", "1e5 G"),
    "field.theta": ("deg", "200 deg"),
    "field.chi": ("deg", "400 deg"),
    "line.doppler": ("km/s", "1000 km/s"),
    "rates.gamma_upper": ("s^-1", "1e12 s^-1"),
    "rates.gamma_lower": ("s^-1", "-1 s^-1"),
    "beam.solid_angle": ("sr", "20 sr"),
    "seed.tb": ("K", "-5 K"),
}
for key, (unit, outside) in quantities.items():
    s = key.replace(".", "_")
    rep(f"{s}_bad_unit", key, '"3 parsec"' if unit != "pc" else '"3 G"')
    rep(f"{s}_no_number", key, f'"fast {unit}"')
    rep(f"{s}_out_of_range", key, f'"{outside}"')
    rep(f"{s}_boolean", key, "true")
    rep(f"{s}_nested_array", key, "[[1]]")
    rep(f"{s}_empty", key, '""')
    rep(f"{s}_nan", key, f'"nan {unit}"')
    rep(f"{s}_date", key, "1979-05-27T07:32:00Z", "date-time")
    rep(f"{s}_empty_list", key, "[]")
    rep(f"{s}_range_no_from", key, f'{{ to = "1 {unit}", steps = 3 }}', want_key=key + ".from")
    rep(f"{s}_range_steps_1", key, f'{{ from = "1 {unit}", to = "2 {unit}", steps = 1 }}', want_key=key + ".steps")
    rep(f"{s}_random_no_n", key, f'{{ dist = "uniform", from = "1 {unit}", to = "2 {unit}" }}', want_key=key + ".n")
    rep(f"{s}_random_bad_dist", key, f'{{ dist = "gauss", n = 3, from = "1 {unit}", to = "2 {unit}" }}', want_key=key + ".dist")

# Plain numbers and enums.
rep("channels_too_few", "line.channels", "8")
rep("channels_too_many", "line.channels", "100000")
rep("channels_float", "line.channels", "64.5")
rep("channels_string", "line.channels", '"64"')
rep("saturation_unreachable", "column.saturation", "1e12")
rep("saturation_zero", "column.saturation", "0.0")
rep("saturation_negative", "column.saturation", "-3.0")
rep("saturation_string", "column.saturation", '"lots"')
rep("pump_kind_unknown", "pump.kind", '"isotropc"', "did you mean")
rep("pump_kind_empty", "pump.kind", '""')
rep("pump_kind_number", "pump.kind", "3")
rep("species_unknown", "species", '"sio"', "did you mean")
rep("species_empty", "species", '""')
rep("species_number", "species", "5")
rep("species_missing_file", "species", '"nothere.toml"')
rep("name_bad", "name", '"has space"')
rep("name_number", "name", "7")
rep("plots_string", "output.plots", '"yes"')
rep("span_narrower_than_line", "line.doppler", '"1 km/s"\nspan = "1 m/s"', want_key="line.span", want_line=CLINE["line.doppler"] + 1)

def add(name, key, text, contains="", want_key=None):
    lines, ln = cfg_after(key, text)
    configs.append((name, lines, want_key or key, ln, contains))

add("unknown_key_field", "field.chi", 'phi = "3 deg"', "did you mean", "field.phi")
add("unknown_key_line", "line.channels", 'chanels = 64', "did you mean", "line.chanels")
add("unknown_key_column", "column.saturation", 'satruation = 3.0', "did you mean", "column.satruation")
add("doppler_and_temperature", "line.channels", 'temperature = "100 K"', "alternatives", "line.temperature")
add("saturation_and_gain", "column.saturation", 'gain = 5.0', "alternatives", "column.gain")
add("first_checkpoint_above", "column.saturation", 'first_checkpoint = 1000.0', "", "column.first_checkpoint")
add("tolerance_too_big", "column.saturation", 'tolerance = 0.5', "", "column.tolerance")
add("checkpoints_zero", "column.saturation", 'checkpoints_per_decade = 0', "", "column.checkpoints_per_decade")
add("seed_linear_above_1", "seed.tb", 'linear = 1.5', "", "seed.linear")
add("seed_total_above_1", "seed.tb", 'linear = 0.8\ncircular = 0.8', "", "seed.linear")
add("seed_angle_unit", "seed.tb", 'angle = "3 K"', "", "seed.angle")
add("alignment_out_of_range", "pump.kind", 'alignment = 2.0', "", "pump.alignment")
add("lower_ratio_uninverted", "pump.kind", 'lower_ratio = 1.5', "", "pump.lower_ratio")
add("upper_f_not_table", "pump.kind", 'upper_f = 3', "", "pump.upper_f")
add("faraday_density_no_length", "output.plots", '[faraday]\nelectron_density = "1e3 cm^-3"', "", "faraday.gain_length")
add("formats_unknown", "output.plots", 'formats = ["png", "gif"]', "", "output.formats")
add("formats_empty", "output.plots", 'formats = []', "empty list", "output.formats")
add("unknown_table", "output.plots", '[fields]\nstrength = "1 G"', "did you mean", "fields")
add("temperature_tiny", "line.channels", 'temperature = "1e-6 K"', "", "line.temperature")
# duplicate key: a TOML error on the second line
add("duplicate_key", "field.chi", 'chi = "5 deg"', "", "field.chi")

# Conflicting structure and TOML syntax.
def raw(name, lines, key, line, contains=""):
    configs.append((name, lines, key, line, contains))

raw("unclosed_array", cfg_replace("field.theta", 'theta = ["30 deg", "60 deg"'), "field.theta", CLINE["field.theta"], "not closed")
raw("unclosed_inline_table", cfg_replace("field.theta", 'theta = { from = "1 deg", to = "5 deg", steps = 3'), "field.theta", CLINE["field.theta"], "not closed")
raw("malformed_header", cfg_replace("line", "[line"), "", CLINE["line"], "table header")
raw("unclosed_string", cfg_replace("field.chi", 'chi = "0 deg'), "field.chi", CLINE["field.chi"], "")
raw("field_missing", [l for l in CONFIG if not l.startswith("strength")], "field.strength", CLINE["field"], "missing")
raw("hyperfine_all_zero", cfg_replace("species", 'species = "h2o-22"')[:CLINE["pump.kind"] - 1] + ['kind = "hyperfine"', 'upper_f = { "5" = 0, "6" = 0, "7" = 0 }'] + CONFIG[CLINE["pump.kind"]:], "pump.upper_f", CLINE["pump.kind"] + 1, "nothing would be pumped")
raw("hyperfine_no_such_f", cfg_replace("species", 'species = "h2o-22"')[:CLINE["pump.kind"] - 1] + ['kind = "hyperfine"', 'upper_f = { "9" = 1 }'] + CONFIG[CLINE["pump.kind"]:], "pump.upper_f.9", CLINE["pump.kind"] + 1, "")
raw("field_not_table", ["field = 3"] + [l for l in CONFIG if l != "[field]" and not l.startswith(("strength", "theta", "chi"))], "field", 1, "")
raw("too_many_models", cfg_replace("field.theta", 'theta = { from = "1 deg", to = "90 deg", steps = 100000 }')[:CLINE["field.chi"] - 1] + ['chi = { from = "1 deg", to = "9 deg", steps = 100 }'] + CONFIG[CLINE["field.chi"]:], "field.chi", CLINE["field.chi"], "too many")
raw("empty_file", [], "species", 0, "missing")
raw("channels_memory", cfg_replace("species", 'species = "synthetic-j6-5"')[:CLINE["line.channels"] - 1] + ["channels = 65536"] + CONFIG[CLINE["line.channels"]:], "line.channels", CLINE["line.channels"], "memory")

SPECIES = """name = "bad species"
frequency = "43.1 GHz"
einstein_a = 3.0e-6
mass = "44 amu"
magneton = "nuclear"
unverified = true
sources = ["invented for tests"]
[upper]
J = 1
g = -0.155
[lower]
J = 0
g = -0.155
[[spin]]
name = "N"
I = 1
g = 0.4
[[coupling]]
kind = "quadrupole"
level = "upper"
spins = ["N"]
value = "0.9 MHz"
""".splitlines()
SLINE = {}
table = ""
spin_n = coup_n = -1
for i, l in enumerate(SPECIES, 1):
    if l == "[[spin]]":
        spin_n += 1; table = f"spin[{spin_n}]"; continue
    if l == "[[coupling]]":
        coup_n += 1; table = f"coupling[{coup_n}]"; continue
    if l.startswith("["):
        table = l.strip("[]"); SLINE[table] = i; continue
    k = l.split("=")[0].strip()
    SLINE[(table + "." + k) if table else k] = i

species = []
def srep(name, key, value, contains="", want_key=None, want_line=None):
    out = list(SPECIES)
    out[SLINE[key] - 1] = key.split(".")[-1] + " = " + value
    species.append((name, out, want_key or key, want_line if want_line is not None else SLINE[key], contains))

srep("frequency_no_unit", "frequency", "43.1")
srep("frequency_bad_unit", "frequency", '"43.1 km/s"')
srep("frequency_negative", "frequency", '"-43.1 GHz"')
srep("frequency_array", "frequency", "[1]")
srep("einstein_a_zero", "einstein_a", "0")
srep("einstein_a_string", "einstein_a", '"fast"')
srep("mass_zero", "mass", '"0 amu"')
srep("mass_bad_unit", "mass", '"44 G"')
srep("magneton_unknown", "magneton", '"nucelar"', "did you mean")
srep("unverified_string", "unverified", '"yes"')
srep("sources_number", "sources", "3")
srep("sources_mixed", "sources", '["a", 3]')
srep("upper_j_negative", "upper.J", "-1")
srep("upper_j_third", "upper.J", '"1/3"')
srep("upper_j_huge", "upper.J", "100000", "basis states")
srep("upper_j_text", "upper.J", '"one"')
srep("upper_g_string", "upper.g", '"x"')
srep("lower_j_not_dipole", "lower.J", "3", "", "lower.J")
srep("spin_i_huge", "spin[0].I", "5000", "basis states")
srep("spin_i_negative", "spin[0].I", "-1")
srep("spin_i_quarter", "spin[0].I", "0.25")
srep("spin_g_string", "spin[0].g", '"x"')
srep("spin_name_number", "spin[0].name", "3")
srep("coupling_kind_unknown", "coupling[0].kind", '"quadrupol"', "did you mean")
srep("coupling_level_unknown", "coupling[0].level", '"uper"', "did you mean")
srep("coupling_spin_unknown", "coupling[0].spins", '["X"]')
srep("coupling_spins_number", "coupling[0].spins", "3")
srep("coupling_value_no_unit", "coupling[0].value", "0.9")
srep("coupling_value_bad_unit", "coupling[0].value", '"0.9 K"')
srep("coupling_two_spins", "coupling[0].spins", '["N", "N"]')
srep("quadrupole_half_spin", "spin[0].I", '"1/2"', "", "coupling[0].spins", SLINE["coupling[0].spins"])
srep("quadrupole_lower_j0", "coupling[0].level", '"lower"', "", "coupling[0].level")

def sadd(name, after, text, key, contains=""):
    out = list(SPECIES)
    out.insert(SLINE[after], text)
    species.append((name, out, key, SLINE[after] + 1, contains))
sadd("unknown_top_key", "mass", 'weight = "44 amu"', "weight", "")
sadd("unknown_level_key", "upper.g", 'gJ = 1', "upper.gJ", "")
sadd("unknown_spin_key", "spin[0].g", 'spin = 1', "spin[0].spin", "")
sadd("unknown_coupling_key", "coupling[0].value", 'valu = 1', "coupling[0].valu", "did you mean")
sadd("spin_shielding_string", "spin[0].g", 'shielding = "x"', "spin[0].shielding", "")
sadd("coupling_source_number", "coupling[0].value", 'source = 3', "coupling[0].source", "")

def sraw(name, lines, key, line, contains=""):
    species.append((name, lines, key, line, contains))
sraw("empty", [], "name", 1, "empty")
sraw("comments_only", ["# nothing here", "# at all"], "name", 1, "empty")
sraw("name_missing", SPECIES[1:], "name", 0, "missing")
sraw("upper_missing", SPECIES[:SLINE["upper"] - 1] + SPECIES[SLINE["lower"] - 1:], "upper", 0, "missing")
sraw("unclosed_sources", SPECIES[:SLINE["sources"] - 1] + ['sources = ["a", "b"'] + SPECIES[SLINE["sources"]:], "sources", SLINE["sources"], "not closed")
sraw("malformed_header", SPECIES[:SLINE["lower"] - 1] + ["[lower"] + SPECIES[SLINE["lower"]:], "", SLINE["lower"], "table header")
sraw("eight_spins", SPECIES[:SLINE["spin[0].name"] - 2] + sum([["[[spin]]", f'name = "S{k}"', 'I = "9/2"', "g = 1"] for k in range(8)], []), "spin[0].I", SLINE["spin[0].I"], "basis states")
sraw("spin_not_table", ["spin = 3"] + SPECIES[:SLINE["spin[0].name"] - 2], "spin", 1, "")

OBS_HEAD = "velocity_kms,I,Q,U,V,dI,dQ,dU,dV"
import math
OBS = [OBS_HEAD]
for i in range(24):
    v = -3 + 0.25 * i
    I = 10 * math.exp(-v * v) + 0.05
    OBS.append(f"{v:.3f},{I:.4f},{0.1*I:.4f},{0.02*I:.4f},{0.001*v:.4f},0.05,0.05,0.05,0.05")
observed = []  # (name, lines, column, line, contains)
def orep(name, line, text, column, contains=""):
    out = list(OBS); out[line - 1] = text
    observed.append((name, out, column, line, contains))
orep("velocity_text", 5, OBS[4].replace(OBS[4].split(",")[0], "abc", 1), "velocity_kms")
orep("i_text", 7, ",".join([OBS[6].split(",")[0], "bright"] + OBS[6].split(",")[2:]), "I")
orep("i_nan", 8, ",".join([OBS[7].split(",")[0], "nan"] + OBS[7].split(",")[2:]), "I")
orep("q_inf", 9, ",".join(OBS[8].split(",")[:2] + ["inf"] + OBS[8].split(",")[3:]), "Q")
orep("v_empty", 10, ",".join(OBS[9].split(",")[:4] + [""] + OBS[9].split(",")[5:]), "V")
orep("di_zero", 11, ",".join(OBS[10].split(",")[:5] + ["0"] + OBS[10].split(",")[6:]), "dI")
orep("di_negative", 12, ",".join(OBS[11].split(",")[:5] + ["-0.05"] + OBS[11].split(",")[6:]), "dI")
orep("duplicate_velocity", 13, ",".join([OBS[11].split(",")[0]] + OBS[12].split(",")[1:]), "velocity_kms")
orep("short_row", 14, ",".join(OBS[13].split(",")[:4]), "", "")
def oraw(name, lines, column, line, contains=""):
    observed.append((name, lines, column, line, contains))
oraw("too_few_rows", OBS[:6], "", 0, "channels")
oraw("no_velocity", ["speed,I,Q,U,V,dI,dQ,dU,dV"] + OBS[1:], "", 0, "velocity")
oraw("no_stokes_i", ["velocity_kms,X,Q,U,V,dI,dQ,dU,dV"] + OBS[1:], "", 0, "Stokes I")
oraw("velocity_bad_unit", ["velocity [furlong/s],I,Q,U,V,dI,dQ,dU,dV"] + OBS[1:], "velocity", 0, "")
oraw("empty", [], "", 0, "")
oraw("header_only", [OBS_HEAD], "", 0, "")

FLAGS = [
    # args (tab-separated), must contain
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t1e30", "--saturation"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t100\t--field\t1e6 G", "--field"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t100\t--workers\t-3", "--workers"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t100\t--table\t/nonexistent-dir/x.csv", "--table"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t100\t--plot\tx.gif", "--plot"),
    ("diagnose\tsio-v1-j1-0\t--ml\t40\t--ml-err\t0.03\t--saturation\t100", "--ml"),
    ("diagnose\tsio-v1-j1-0\t--ml-err\t0.03\t--saturation\t100", "--ml"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03", "saturation"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t100\t--doppler\t-1 km/s", "--doppler"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t100\t--gamma\t5 K", "--gamma"),
    ("diagnose\tsio-v1-j1-0\t--ml\t0.4\t--ml-err\t0.03\t--tb\t1e40 K\t--domega\t1 sr", "--tb"),
    ("diagnose\tnot-a-species\t--ml\t0.4\t--ml-err\t0.03\t--saturation\t100", "not-a-species"),
    ("zeeman-factor\tsio-v1-j1-0\t--workers\t-1", "--workers"),
    ("zeeman-factor\tsio-v1-j1-0\t--b0\t1e9 G", "--b0"),
    ("zeeman-factor\tsio-v1-j1-0\t--saturation\t1e30", "--saturation"),
    ("zeeman-factor\tsio-v1-j1-0\t--theta\t90 deg", "--theta"),
    ("zeeman-factor\tsio-v1-j1-0\t--table\t/nonexistent-dir/f.csv", "--table"),
    ("zeeman-factor\tsio-v1-j1-0\t--component\t7", "component"),
    ("run\tCONFIG\t--workers\t-2", "--workers"),
    ("run\tCONFIG\t--shard\t4/3", "--shard"),
    ("run\tCONFIG\t--shard\tx", "--shard"),
    ("levels\tsio-v1-j1-0\t--field\t0:1e9:3 G", "--field"),
    ("levels\tsio-v1-j1-0\t--format\txml", "--format"),
    ("compare\tRUNDIR\tOBSERVED\t--velocity-unit\tfurlong", "--velocity-unit"),
    ("compare\tRUNDIR\tOBSERVED\t--top\t0", "--top"),
    ("compare\tRUNDIR\tOBSERVED\t--plot\tbest.gif", "--plot"),
    ("compare\tRUNDIR\tOBSERVED\t--table\t/nonexistent-dir/r.csv", "--table"),
    ("compare\tRUNDIR\tOBSERVED\t--max-shift\t-3 km/s", "--max-shift"),
    ("compare\tRUNDIR\tOBSERVED\t--stokes\tQU", "Stokes I"),
    ("plot\tRUNDIR\t--format\tgif", "gif"),
]

def write(sub, name, ext, lines):
    d = os.path.join(HERE, sub)
    os.makedirs(d, exist_ok=True)
    path = os.path.join(d, name + ext)
    with open(path, "w") as f:
        f.write("\n".join(lines) + ("\n" if lines else ""))
    return sub + "/" + name + ext

for sub in ("config", "species", "observed"):
    shutil.rmtree(os.path.join(HERE, sub), ignore_errors=True)
rows = []
for name, lines, key, line, contains in configs:
    rows.append(("config", write("config", name, ".toml", lines), key, line, contains))
for name, lines, key, line, contains in species:
    rows.append(("species", write("species", name, ".toml", lines), key, line, contains))
for name, lines, col, line, contains in observed:
    rows.append(("observed", write("observed", name, ".csv", lines), col, line, contains))
with open(os.path.join(HERE, "expect.tsv"), "w") as f:
    f.write("# kind\tfile\tkey or column\tline (0: none)\tmessage contains\n")
    for r in rows:
        f.write("\t".join(str(x) for x in r) + "\n")
with open(os.path.join(HERE, "flags.tsv"), "w") as f:
    f.write("# arguments (tab-separated; CONFIG, RUNDIR, OBSERVED are filled in by the test) | message contains\n")
    for args, want in FLAGS:
        f.write(args + "\t|\t" + want + "\n")
print(len(rows), "files,", len(FLAGS), "flag cases,", len(rows) + len(FLAGS), "in all")
