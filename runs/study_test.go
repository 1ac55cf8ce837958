package runs

import (
	"bytes"
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"maserpol/config"
	"maserpol/runs/ecsv"
	"maserpol/transfer"
)

// synthetic is a stand-in for transfer.Run with the same output shape: a
// Gaussian line growing with saturation, polarization from theta and B. It
// sleeps a parameter-dependent time so that workers finish out of order.
func synthetic(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
	p = p.WithDefaults()
	time.Sleep(time.Duration(int(p.Theta*1000+math.Abs(p.Field)*1e3)%7) * time.Millisecond)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	n := p.Channels
	tr := &transfer.Trajectory{GOmega: 100 * math.Abs(p.Field)}
	for i := 0; i < n; i++ {
		tr.Velocity = append(tr.Velocity, p.Doppler*(-4+8*float64(i)/float64(n-1)))
	}
	for k := 0; k < 5; k++ {
		sat := math.Pow(10, float64(k)-2)
		cp := transfer.Checkpoint{Saturation: sat, Gain: float64(k + 1), RoverGOmega: sat / (100 * math.Abs(p.Field))}
		cp.Valid = cp.RoverGOmega <= ValidLimit
		s2 := math.Sin(p.Theta) * math.Sin(p.Theta)
		ml := s2 / 3 * sat / (1 + sat)
		for _, v := range tr.Velocity {
			x := v / p.Doppler
			i := math.Pow(10, float64(k)) * math.Exp(-x*x)
			cp.I = append(cp.I, i)
			cp.Q = append(cp.Q, ml*i*math.Cos(2*p.Chi))
			cp.U = append(cp.U, ml*i*math.Sin(2*p.Chi))
			cp.V = append(cp.V, -2*x*i*math.Cos(p.Theta)*p.Field*1e-3)
		}
		cp.IPeak = math.Pow(10, float64(k))
		cp.TbdOmega = cp.IPeak * p.BeamSolid
		cp.Ml, cp.MlInt, cp.Qb = ml, ml*0.9, ml
		cp.EVPA = p.Chi
		cp.PV = 1e-3 * math.Abs(p.Field*math.Cos(p.Theta))
		cp.VIPeak = 0
		tr.Checkpoints = append(tr.Checkpoints, cp)
	}
	return tr, nil
}

const cfg2x3 = `species = "sio-v1-j1-0"
[field]
strength = ["10 mG", "30 mG"]
theta = ["30 deg", "60 deg", "90 deg"]
chi = "10 deg"
[line]
channels = 32
[output]
plots = false
`

func study(t testing.TB, text string) *config.Study {
	t.Helper()
	st, err := config.Parse([]byte(text), "test.toml")
	if err != nil {
		t.Fatal(err)
	}
	return st
}

func execute(t testing.TB, st *config.Study, dir string, opt Options) *Report {
	t.Helper()
	if opt.Model == nil {
		opt.Model = synthetic
	}
	rep, err := Execute(context.Background(), st, dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	return rep
}

// tables returns the contents of every table of a run directory.
func tables(t testing.TB, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	for _, pat := range []string{"config.toml", "summary.ecsv", "models/*.ecsv", "spectra/*.ecsv"} {
		files, _ := filepath.Glob(filepath.Join(dir, pat))
		for _, f := range files {
			data, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			rel, _ := filepath.Rel(dir, f)
			out[rel] = string(data)
		}
	}
	return out
}

func sameTables(t *testing.T, a, b map[string]string, what string) {
	t.Helper()
	if len(a) != len(b) {
		t.Errorf("%s: %d files vs %d", what, len(a), len(b))
	}
	for k, v := range a {
		if b[k] != v {
			t.Errorf("%s: %s differs", what, k)
		}
	}
}

func TestTablesIndependentOfWorkers(t *testing.T) {
	st := study(t, cfg2x3)
	if len(st.Models) != 6 {
		t.Fatalf("%d models", len(st.Models))
	}
	d1, d2 := t.TempDir(), t.TempDir()
	execute(t, st, d1, Options{Workers: 1})
	rep := execute(t, st, d2, Options{Workers: 4})
	if rep.Ran != 6 || rep.Failed != 0 || rep.Pending != 0 {
		t.Errorf("report %+v", rep)
	}
	a, b := tables(t, d1), tables(t, d2)
	sameTables(t, a, b, "workers 1 vs 4")
	if len(a) != 1+1+6+6 {
		t.Errorf("files: %d", len(a))
	}

	// The summary parses, has one row per model and checkpoint, and the
	// documented columns with units.
	sum, err := ecsv.ReadFile(filepath.Join(d1, "summary.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	if len(sum.Rows) != 6*5 {
		t.Errorf("%d summary rows, want 30", len(sum.Rows))
	}
	units := map[string]string{"B_mG": "mG", "theta_deg": "deg", "chi_deg": "deg", "TbdOmega_Ksr": "K sr", "evpa_deg": "deg", "ipeak_K": "K"}
	for _, name := range []string{"model", "B_mG", "theta_deg", "chi_deg", "saturation", "TbdOmega_Ksr", "ml", "ml_int", "evpa_deg", "qb", "pv", "vi_peak", "r_over_gomega", "valid", "checkpoint", "ipeak_K"} {
		c, ok := sum.Column(name)
		if !ok {
			t.Errorf("summary lacks column %s", name)
			continue
		}
		if c.Description == "" || c.Unit != units[name] {
			t.Errorf("column %s: unit %q (want %q), description %q", name, c.Unit, units[name], c.Description)
		}
	}
	b2, _ := sum.Floats("B_mG")
	th, _ := sum.Floats("theta_deg")
	ev, _ := sum.Floats("evpa_deg")
	if b2[0] != 10 || th[0] != 30 || math.Abs(ev[0]-10) > 1e-12 {
		t.Errorf("first row B %g theta %g evpa %g; want 10 mG, 30 deg, 10 deg", b2[0], th[0], ev[0])
	}
	sp, err := ecsv.ReadFile(filepath.Join(d1, "spectra", "m0003.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	if len(sp.Rows) != 5*32 {
		t.Errorf("spectrum rows %d, want 160", len(sp.Rows))
	}
	if c, _ := sp.Column("velocity_kms"); c.Unit != "km / s" {
		t.Errorf("velocity unit %q", c.Unit)
	}
	man, err := ReadManifest(d1)
	if err != nil {
		t.Fatal(err)
	}
	if man.Status != StudyComplete || man.ConfigHash != st.Hash || man.Finished == "" || len(man.Models) != 6 {
		t.Errorf("manifest %+v", man)
	}
}

// The six models of a 2 x 3 study equal the same models run one by one
// as single-model studies.
func TestStudyEqualsSingleRuns(t *testing.T) {
	st := study(t, cfg2x3)
	d := t.TempDir()
	execute(t, st, d, Options{Workers: 2})
	for _, m := range st.Models {
		var bs, th string
		for _, v := range m.Values {
			switch v.Column {
			case "B_mG":
				bs = v.Text
			case "theta_deg":
				th = v.Text
			}
		}
		single := strings.Replace(strings.Replace(cfg2x3, `["10 mG", "30 mG"]`, `"`+bs+`"`, 1), `["30 deg", "60 deg", "90 deg"]`, `"`+th+`"`, 1)
		s1 := study(t, single)
		d1 := t.TempDir()
		execute(t, s1, d1, Options{Workers: 1})
		a, _ := ecsv.ReadFile(filepath.Join(d, "spectra", m.Name+".ecsv"))
		b, _ := ecsv.ReadFile(filepath.Join(d1, "spectra", "m0000.ecsv"))
		for _, c := range []string{"velocity_kms", "I", "Q", "U", "V"} {
			x, _ := a.Floats(c)
			y, _ := b.Floats(c)
			if len(x) != len(y) || len(x) == 0 {
				t.Fatalf("%s %s: %d vs %d rows", m.Name, c, len(x), len(y))
			}
			for i := range x {
				if x[i] != y[i] {
					t.Fatalf("%s %s row %d: %g in the study, %g alone", m.Name, c, i, x[i], y[i])
				}
			}
		}
	}
}

func TestResumeAfterCancel(t *testing.T) {
	st := study(t, cfg2x3)
	ref := t.TempDir()
	execute(t, st, ref, Options{Workers: 2})

	d := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	var n atomic.Int32
	stopAfter := func(c context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		if n.Add(1) > 2 {
			cancel()
		}
		return synthetic(c, p)
	}
	rep, err := Execute(ctx, st, d, Options{Workers: 1, Model: stopAfter})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled run returned %v", err)
	}
	if rep.Ran != 2 || rep.Pending != 4 {
		t.Fatalf("after cancel: ran %d pending %d, want 2 and 4", rep.Ran, rep.Pending)
	}
	man, _ := ReadManifest(d)
	if man.Status != StudyInterrupted {
		t.Errorf("manifest status %q", man.Status)
	}
	// A leftover temporary file from a kill is cleaned up.
	os.WriteFile(filepath.Join(d, "spectra", "m0004.ecsv"+tmpMarker+"123"), []byte("partial"), 0o644)

	if _, err := Execute(context.Background(), st, d, Options{Workers: 2, Model: synthetic}); err == nil {
		t.Fatal("second run without Resume accepted an existing run directory")
	}
	var calls atomic.Int32
	counting := func(c context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		calls.Add(1)
		return synthetic(c, p)
	}
	rep = execute(t, st, d, Options{Workers: 2, Resume: true, Model: counting})
	if calls.Load() != 4 || rep.Skipped != 2 || rep.Ran != 4 {
		t.Errorf("resume computed %d models (skipped %d); want 4 (2)", calls.Load(), rep.Skipped)
	}
	sameTables(t, tables(t, ref), tables(t, d), "resumed vs uninterrupted")
	if files, _ := filepath.Glob(filepath.Join(d, "*", "*"+tmpMarker+"*")); len(files) > 0 {
		t.Errorf("temporary files left: %v", files)
	}
	man, _ = ReadManifest(d)
	if man.Status != StudyComplete || len(man.Sessions) != 2 || man.Sessions[1].Kind != "resume" {
		t.Errorf("manifest after resume: status %s, sessions %+v", man.Status, man.Sessions)
	}
	// Resuming a complete run does nothing.
	calls.Store(0)
	execute(t, st, d, Options{Resume: true, Model: counting})
	if calls.Load() != 0 {
		t.Errorf("resume of a complete run recomputed %d models", calls.Load())
	}
}

func TestResumeRefusesChangedConfig(t *testing.T) {
	d := t.TempDir()
	execute(t, study(t, cfg2x3), d, Options{})
	before := tables(t, d)
	changed := study(t, strings.Replace(cfg2x3, `chi = "10 deg"`, `chi = "11 deg"`, 1))
	_, err := Execute(context.Background(), changed, d, Options{Resume: true, Model: synthetic})
	var ie *InputError
	if !errors.As(err, &ie) || !strings.Contains(err.Error(), "config changed") {
		t.Fatalf("got %v, want an InputError about the changed config", err)
	}
	sameTables(t, before, tables(t, d), "after refused resume")
}

func TestShardMerge(t *testing.T) {
	st := study(t, cfg2x3)
	ref := t.TempDir()
	execute(t, st, ref, Options{Workers: 2})
	root := t.TempDir()
	var shards []string
	for k := 1; k <= 4; k++ { // 4 shards of 6 models: sizes 2, 2, 1, 1
		d := filepath.Join(root, "shard", string(rune('0'+k)))
		rep := execute(t, st, d, Options{Workers: 1, Shard: Shard{k, 4}})
		want := 1
		if k <= 2 {
			want = 2
		}
		if rep.InShard != want || rep.Ran != want {
			t.Errorf("shard %d/4: %d models in shard, %d run; want %d", k, rep.InShard, rep.Ran, want)
		}
		shards = append(shards, d)
	}
	// Partial merge: pending models are reported, not invented.
	part, err := Merge(filepath.Join(root, "part"), shards[:2]...)
	if err != nil {
		t.Fatal(err)
	}
	if part.Status != StudyIncomplete {
		t.Errorf("partial merge status %s", part.Status)
	}
	dst := filepath.Join(root, "merged")
	man, err := Merge(dst, shards...)
	if err != nil {
		t.Fatal(err)
	}
	sameTables(t, tables(t, ref), tables(t, dst), "merged vs unsharded")
	refMan, _ := ReadManifest(ref)
	strip := func(m *Manifest) Manifest {
		c := *m
		c.Started, c.Finished, c.Sessions = "", "", nil
		return c
	}
	a, b := strip(refMan), strip(man)
	ja, jb := mustJSON(t, a), mustJSON(t, b)
	if ja != jb {
		t.Errorf("manifests differ beyond times:\n%s\n%s", ja, jb)
	}
	// Repeating a merge changes nothing; a directory that holds no run
	// is refused.
	if _, err := Merge(dst, shards...); err != nil {
		t.Errorf("repeated merge: %v", err)
	}
	sameTables(t, tables(t, ref), tables(t, dst), "merged twice vs unsharded")
	junk := filepath.Join(root, "junk")
	os.MkdirAll(junk, 0o755)
	os.WriteFile(filepath.Join(junk, "notes.txt"), []byte("mine"), 0o644)
	if _, err := Merge(junk, shards...); err == nil {
		t.Error("merge into a non-empty directory without a run accepted")
	}
	// The partial merge is completed by merging the missing shards into
	// it, as the command suggests.
	if _, err := Merge(filepath.Join(root, "part"), shards[2:]...); err != nil {
		t.Fatalf("merging the missing shards into the partial merge: %v", err)
	}
	sameTables(t, tables(t, ref), tables(t, filepath.Join(root, "part")), "partial merge completed")
	other := t.TempDir()
	execute(t, study(t, strings.Replace(cfg2x3, "10 deg", "12 deg", 1)), other, Options{Shard: Shard{1, 4}})
	if _, err := Merge(filepath.Join(root, "bad"), shards[0], other); err == nil {
		t.Error("merge of runs of different configs accepted")
	}
}

func mustJSON(t *testing.T, m Manifest) string {
	var buf bytes.Buffer
	sort.Slice(m.Models, func(i, j int) bool { return m.Models[i].Index < m.Models[j].Index })
	if err := jsonEncode(&buf, m); err != nil {
		t.Fatal(err)
	}
	return buf.String()
}

func TestFailedModelRecorded(t *testing.T) {
	st := study(t, cfg2x3)
	d := t.TempDir()
	failing := func(c context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		if p.Theta > 1.5 {
			return nil, errors.New("step size underflow")
		}
		return synthetic(c, p)
	}
	rep, err := Execute(context.Background(), st, d, Options{Model: failing})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Failed != 2 || len(rep.Failures) != 2 {
		t.Fatalf("failed %d (%v), want 2", rep.Failed, rep.Failures)
	}
	man, _ := ReadManifest(d)
	nf := 0
	for _, m := range man.Models {
		if m.Status == StatusFailed {
			nf++
			if !strings.Contains(m.Error, "underflow") {
				t.Errorf("%s: error %q", m.Name, m.Error)
			}
		}
	}
	if nf != 2 || man.Status != StudyFailed {
		t.Errorf("manifest: %d failed, status %s", nf, man.Status)
	}
	sum, _ := ecsv.ReadFile(filepath.Join(d, "summary.ecsv"))
	if len(sum.Rows) != 4*5 {
		t.Errorf("summary has %d rows, want 20 (failed models have none)", len(sum.Rows))
	}
	// Resume retries the failed models.
	rep = execute(t, st, d, Options{Resume: true})
	if rep.Ran != 2 || rep.Failed != 0 {
		t.Errorf("resume: ran %d failed %d", rep.Ran, rep.Failed)
	}
}

func TestExistingDirectoryRefused(t *testing.T) {
	d := t.TempDir()
	os.WriteFile(filepath.Join(d, "notes.txt"), []byte("mine"), 0o644)
	_, err := Execute(context.Background(), study(t, cfg2x3), d, Options{Model: synthetic})
	var ie *InputError
	if !errors.As(err, &ie) {
		t.Fatalf("got %v", err)
	}
	ents, _ := os.ReadDir(d)
	if len(ents) != 1 {
		t.Errorf("refused directory was modified: %d entries", len(ents))
	}
}

func TestValidityWarning(t *testing.T) {
	st := study(t, cfg2x3)
	rep := execute(t, st, t.TempDir(), Options{})
	// synthetic: R/gOmega = sat/(100 B[G]) at sat = 0.01 ... 100; B = 10 mG
	// gives g Omega = 1 s^-1, R/gOmega = 1 at sat 1 and 100 at sat 100.
	want := "R/gOmega exceeds 0.1 from R/Gamma = 1 on with the populations-only model (g Omega = 1 s^-1, max R/gOmega = 100;"
	if len(rep.Warnings) == 0 || !strings.Contains(rep.Warnings[0].Msg, want) {
		t.Errorf("warnings %+v, want %q", rep.Warnings, want)
	}
	// Valid: sat <= 0.1 at 10 mG and sat <= 0.3 at 30 mG, two of five
	// checkpoints per model either way.
	if v := rep.Validity; v.Checkpoints != 30 || v.Valid != 12 || v.MaxRoverGOmega != 100 {
		t.Errorf("validity %+v, want 12 of 30, max 100", v)
	}
	// The validity warning that package transfer already gives is not repeated.
	tr, _ := synthetic(context.Background(), st.Models[0].Params)
	tr.Warnings = append(tr.Warnings, "other", transfer.ValidityWarning(tr))
	if ws := modelWarnings(tr); len(ws) != 2 || ws[0] != "other" || !strings.HasPrefix(ws[1], want) {
		t.Errorf("modelWarnings %q", ws)
	}
}

func TestParseShard(t *testing.T) {
	for _, s := range []string{"0/4", "5/4", "1/0", "a/b", "3"} {
		if _, err := ParseShard(s); err == nil {
			t.Errorf("%q accepted", s)
		}
	}
	sh, err := ParseShard("2/3")
	if err != nil || !sh.Holds(1) || sh.Holds(0) || !sh.Holds(4) {
		t.Errorf("2/3: %v %v", sh, err)
	}
}

// A run directory of an earlier version has summary.csv: it is still read
// (SummaryPath), and a resume replaces it by summary.ecsv, which astropy
// opens by its extension.
func TestLegacySummaryName(t *testing.T) {
	st := study(t, cfg2x3)
	d := t.TempDir()
	execute(t, st, d, Options{Workers: 2})
	ecsvPath := filepath.Join(d, SummaryName)
	if err := os.Rename(ecsvPath, filepath.Join(d, "summary.csv")); err != nil {
		t.Fatal(err)
	}
	if got := SummaryPath(d); got != filepath.Join(d, "summary.csv") {
		t.Errorf("SummaryPath of a legacy directory = %s", got)
	}
	execute(t, st, d, Options{Resume: true})
	if _, err := os.Stat(ecsvPath); err != nil {
		t.Errorf("resume did not write %s: %v", SummaryName, err)
	}
	if _, err := os.Stat(filepath.Join(d, "summary.csv")); !os.IsNotExist(err) {
		t.Errorf("legacy summary.csv left beside %s (err %v)", SummaryName, err)
	}
	if got := SummaryPath(d); got != ecsvPath {
		t.Errorf("SummaryPath = %s, want %s", got, ecsvPath)
	}
}
