package runs

import "runtime/debug"

// Revision returns the version-control revision the program was built
// from and whether the working tree had local changes, as recorded by
// the Go toolchain (vcs.revision, vcs.modified); revision is "" when the
// build carries no such record (go run, tests, builds outside a
// repository).
func Revision() (revision string, modified bool) {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return "", false
	}
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			revision = s.Value
		case "vcs.modified":
			modified = s.Value == "true"
		}
	}
	return revision, modified
}

// Program names the program for manifest.json: "maserpol", then the
// revision when known, e.g. "maserpol (revision 3f2a9c1d04e5, modified)".
// Tables carry only Version, so that they stay identical across builds of
// one version.
func Program() string {
	rev, mod := Revision()
	if rev == "" {
		return "maserpol"
	}
	if len(rev) > 12 {
		rev = rev[:12]
	}
	s := "maserpol (revision " + rev
	if mod {
		s += ", modified"
	}
	return s + ")"
}
