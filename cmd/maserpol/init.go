package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/BurntSushi/toml"

	"maserpol/config"
	"maserpol/levels/species"
	"maserpol/runs/figures"
)

func cmdInit(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flagsFor("init", stderr)
	sp := fs.String("species", "", "species preset `NAME` or species file (default "+config.DefaultSpecies+"; presets: "+strings.Join(species.Names(), ", ")+")")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) > 1 {
		fs.Usage()
		return exitInput
	}
	file := "maserpol.toml"
	if len(pos) == 1 {
		file = pos[0]
	}
	name := "" // "-" prints the generic starter, named "example"
	if file != "-" {
		name = strings.TrimSuffix(filepath.Base(file), filepath.Ext(file))
	}
	text, err := config.StarterNamed(*sp, name)
	if err != nil {
		return report(stderr, usagef("%v", err))
	}
	if file == "-" {
		fmt.Fprint(stdout, text)
		return exitOK
	}
	if err := createNew(file, []byte(text)); err != nil {
		return report(stderr, err)
	}
	fmt.Fprintf(stdout, "wrote %s; edit it, then: maserpol run %s\n", file, file)
	return exitOK
}

// createNew writes a file that must not exist yet: through a temporary
// file and a hard link, which fails if the name is taken, so an existing
// file is never replaced, even in a race.
func createNew(path string, data []byte) error {
	if _, err := os.Lstat(path); err == nil {
		return usagef("%s exists; init does not overwrite files (remove it or name another file)", path)
	}
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, filepath.Base(path)+".tmp-*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	defer os.Remove(tmp)
	_, err = f.Write(data)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp, 0o644)
	}
	if err != nil {
		return err
	}
	if err := os.Link(tmp, path); err != nil {
		if errors.Is(err, os.ErrExist) {
			return usagef("%s exists; init does not overwrite files", path)
		}
		return err
	}
	return nil
}

// figureFormats decides the figure formats: the flag, else output.formats
// of the run's config.toml, else png and svg. It also returns output.plots.
func figureFormats(flagValue, dir string) ([]string, bool, error) {
	var doc struct {
		Output struct {
			Plots   *bool    `toml:"plots"`
			Formats []string `toml:"formats"`
		} `toml:"output"`
	}
	toml.DecodeFile(filepath.Join(dir, "config.toml"), &doc)
	plots := doc.Output.Plots == nil || *doc.Output.Plots
	formats := doc.Output.Formats
	if flagValue != "" {
		formats = nil
		for _, f := range strings.Split(flagValue, ",") {
			f = strings.ToLower(strings.TrimSpace(f))
			ok := false
			for _, g := range figures.Formats {
				ok = ok || f == g
			}
			if !ok {
				return nil, false, usagef("--format: unknown figure format %q (allowed: %s)", f, strings.Join(figures.Formats, ", "))
			}
			formats = append(formats, f)
		}
	}
	if len(formats) == 0 {
		formats = []string{"png", "svg"}
	}
	return formats, plots, nil
}
