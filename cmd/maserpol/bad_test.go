package main

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestBadInputCorpus runs the regression corpus of testdata/bad (made by
// its gen.py): configs, species files, observed spectra and flags that
// must each be refused with exit status 2 and a message naming the file,
// the line and the key (or column) of the fault, without creating a run
// directory.
func TestBadInputCorpus(t *testing.T) {
	root := filepath.Join("..", "..", "testdata", "bad")
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "small.toml", small)
	rundir := filepath.Join(tmp, "run")
	if code, _, e := maserpol(t, "run", cfg, "--out", rundir); code != 0 {
		t.Fatalf("run: exit %d\n%s", code, e)
	}
	good := filepath.Join(root, "..", "observed", "kestrel9-sio.ecsv")

	f, err := os.Open(filepath.Join(root, "expect.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	n := 0
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if strings.HasPrefix(sc.Text(), "#") || sc.Text() == "" {
			continue
		}
		c := strings.Split(sc.Text(), "\t")
		if len(c) != 5 {
			t.Fatalf("expect.tsv: bad row %q", sc.Text())
		}
		kind, file, key, contains := c[0], filepath.Join(root, c[1]), c[2], c[4]
		line, _ := strconv.Atoi(c[3])
		n++
		var args []string
		out := filepath.Join(tmp, fmt.Sprintf("out%d", n))
		label := "key "
		switch kind {
		case "config":
			args = []string{"run", file, "--out", out}
		case "species":
			args = []string{"levels", file}
		case "observed":
			args = []string{"compare", rundir, file}
			label = "column "
		}
		code, _, e := maserpol(t, args...)
		if code != exitInput {
			t.Errorf("%s: exit %d, want 2\n%s", c[1], code, e)
			continue
		}
		want := file
		if line > 0 {
			want += ":" + strconv.Itoa(line)
		}
		if key != "" {
			want += ": " + label + key + ":"
		} else if line > 0 {
			want += ": "
		}
		if !strings.Contains(e, want) {
			t.Errorf("%s: message does not name %q:\n%s", c[1], want, e)
		}
		if contains != "" && !strings.Contains(e, contains) {
			t.Errorf("%s: message does not say %q:\n%s", c[1], contains, e)
		}
		if strings.Count(e, "(allowed: ") > 1 || strings.Contains(e, "interface {}") || strings.Contains(e, "<nil>") || strings.Contains(e, "goroutine") {
			t.Errorf("%s: message leaks internals or repeats itself:\n%s", c[1], e)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("%s: a run directory was created", c[1])
		}
	}

	flags, err := os.ReadFile(filepath.Join(root, "flags.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	for _, row := range strings.Split(string(flags), "\n") {
		if strings.HasPrefix(row, "#") || row == "" {
			continue
		}
		argText, want, _ := strings.Cut(row, "\t|\t")
		args := strings.Split(argText, "\t")
		for i, a := range args {
			switch a {
			case "CONFIG":
				args[i] = cfg
			case "RUNDIR":
				args[i] = rundir
			case "OBSERVED":
				args[i] = good
			}
		}
		n++
		code, _, e := maserpol(t, args...)
		if code != exitInput || !strings.Contains(e, want) {
			t.Errorf("%q: exit %d, want 2 with a message naming %q:\n%s", argText, code, want, e)
		}
	}
	if n < 150 {
		t.Errorf("the corpus holds %d cases; it should hold at least 150", n)
	}
}
