package main

import (
	"context"
	"embed"
	"fmt"
	"io"
	"os"
	"path"
	"path/filepath"
	"strings"

	"maserpol/config"
	"maserpol/runs"
)

// demoFS holds the demonstration configs: real config files a user can
// copy, run through the same code as "maserpol run".
//
//go:embed demo/*.toml
var demoFS embed.FS

// demoStudies lists the demonstration configs in the order they run.
var demoStudies = []string{"irc-vela-7-sio.toml", "hydra-w4-water.toml"}

func cmdDemo(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flagsFor("demo", stderr)
	out := fs.String("out", "maserpol-demo", "`directory` for the demonstration runs and their configs")
	workers := fs.Int("workers", 0, "number of models computed at once; 0 = one per CPU core (the default)")
	titles := fs.Bool("titles", false, "put a title above each figure (journal figures have none; default off)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) > 0 {
		fs.Usage()
		return exitInput
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return report(stderr, err)
	}
	fmt.Fprintf(stdout, "maserpol demo: invented sources IRC-Vela 7 (SiO clump of a fictitious evolved star) and Hydra W4 (fictitious water feature)\n")
	for _, name := range demoStudies {
		data, err := demoFS.ReadFile(path.Join("demo", name))
		if err != nil {
			return report(stderr, err)
		}
		// Keep a copy of the config next to the run, to be edited and rerun.
		cfg := filepath.Join(*out, name)
		if err := writeIfAbsentOrSame(cfg, data); err != nil {
			return report(stderr, err)
		}
		st, err := config.Parse(data, cfg)
		if err != nil {
			return report(stderr, err)
		}
		dir := filepath.Join(*out, strings.TrimSuffix(name, ".toml"))
		fmt.Fprintf(stdout, "\nconfig: %s (%d models, species %s)\n", cfg, len(st.Models), st.Models[0].Species)
		// Resume makes a repeated demo finish instantly from its own results.
		code, _ := runStudy(ctx, st, dir, runs.Options{Workers: *workers, Resume: true, Titles: *titles}, stdout, stderr)
		if code != exitOK {
			if _, err := runs.ReadManifest(dir); err == nil && ctx.Err() == nil {
				fmt.Fprintf(stderr, "maserpol: (remove %s to run the demo again)\n", dir)
			}
			return code
		}
	}
	fmt.Fprintf(stdout, "\nRedraw figures with: maserpol plot DIR; start your own study with: maserpol init\n")
	return exitOK
}

func writeIfAbsentOrSame(file string, data []byte) error {
	if old, err := os.ReadFile(file); err == nil {
		if string(old) == string(data) {
			return nil
		}
		return usagef("%s exists with other content; choose another --out", file)
	}
	return createNew(file, data)
}
