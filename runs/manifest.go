package runs

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"time"

	"github.com/BurntSushi/toml"

	"maserpol/config"
	"maserpol/transfer"
)

// Manifest is manifest.json of a run directory.
type Manifest struct {
	Program     string `json:"program"`
	Version     string `json:"version"`
	ConfigHash  string `json:"config_hash"`
	Study       string `json:"study,omitempty"`
	Status      string `json:"status"` // complete, incomplete, failed, interrupted
	Started     string `json:"started"`
	Finished    string `json:"finished,omitempty"`
	Shard       string `json:"shard,omitempty"`
	Determinism string `json:"determinism"`
	// PopulationModel is the population model of the study's models
	// (populations.model: auto, rates or density); the tables say per
	// checkpoint which one gave it.
	PopulationModel string `json:"population_model"`
	// Seeds are the seeds of the random sweeps in the config, by key.
	Seeds map[string]int64 `json:"seeds"`
	// ParameterColumns lists the parameter columns of the tables, in
	// order: B_mG, theta_deg, chi_deg, then one per other swept key.
	ParameterColumns []string `json:"parameter_columns"`
	// VariedColumns lists the parameter columns whose value differs
	// between models (a B x theta study: B_mG, theta_deg).
	VariedColumns []string      `json:"varied_columns"`
	Sessions      []Session     `json:"sessions"`
	Models        []ModelStatus `json:"models"`
}

// Session records one invocation that worked on the directory.
type Session struct {
	Kind     string `json:"kind"` // run, resume, merge
	Started  string `json:"started"`
	Finished string `json:"finished,omitempty"`
	Workers  int    `json:"workers,omitempty"`
	Shard    string `json:"shard,omitempty"`
	Ran      int    `json:"models_run"`
	// Stopped says why a session ended early: "interrupted" (a signal) or
	// "write error: ..."; empty when it ran to its end. A session killed
	// outright records nothing; the next one counts its models.
	Stopped string `json:"stopped,omitempty"`
}

// ModelStatus is the state of one model.
type ModelStatus struct {
	Name       string             `json:"name"`
	Index      int                `json:"index"`
	Species    string             `json:"species"`
	Parameters map[string]float64 `json:"parameters"`
	Status     string             `json:"status"`
	Error      string             `json:"error,omitempty"`
}

const determinismNote = "tables depend only on the config: not on worker count, order of completion, interruption and resume, or sharding"

// Status of a study in the manifest.
const (
	StudyComplete    = "complete"
	StudyIncomplete  = "incomplete" // some models pending (e.g. other shards)
	StudyFailed      = "failed"     // some models failed
	StudyInterrupted = "interrupted"
)

func stamp(t time.Time) string { return t.UTC().Format(time.RFC3339Nano) }

func newManifest(st *config.Study, l layout, sh Shard, now time.Time) *Manifest {
	m := &Manifest{
		Program:          Program(),
		Version:          Version,
		ConfigHash:       st.Hash,
		Status:           StudyIncomplete,
		Started:          stamp(now),
		Shard:            sh.String(),
		Determinism:      determinismNote,
		PopulationModel:  populationModelOf(st),
		Seeds:            seedsOf(st.Resolved),
		Study:            studyName(st.Resolved),
		ParameterColumns: append([]string{}, l.params...),
		VariedColumns:    []string{},
	}
	varied := make([]bool, len(l.params))
	var first []float64
	for i := range st.Models {
		md := &st.Models[i]
		ms := ModelStatus{Name: md.Name, Index: md.Index, Species: md.Species, Status: StatusPending, Parameters: map[string]float64{}}
		if pv, err := l.paramValues(md); err == nil {
			if first == nil {
				first = pv
			}
			for j, n := range l.params {
				ms.Parameters[n] = pv[j]
				varied[j] = varied[j] || pv[j] != first[j]
			}
		}
		m.Models = append(m.Models, ms)
	}
	for j, v := range varied {
		if v {
			m.VariedColumns = append(m.VariedColumns, l.params[j])
		}
	}
	return m
}

// seedsOf finds the seeds of random sweeps ({dist, n, seed, ...} tables) in
// the resolved config.
func seedsOf(resolved []byte) map[string]int64 {
	seeds := map[string]int64{}
	var doc map[string]any
	if toml.Unmarshal(resolved, &doc) != nil {
		return seeds
	}
	var walk func(prefix string, t map[string]any)
	walk = func(prefix string, t map[string]any) {
		for k, v := range t {
			key := k
			if prefix != "" {
				key = prefix + "." + k
			}
			sub, ok := v.(map[string]any)
			if !ok {
				continue
			}
			if _, isRandom := sub["dist"]; isRandom {
				if s, ok := sub["seed"].(int64); ok {
					seeds[key] = s
				}
				continue
			}
			walk(key, sub)
		}
	}
	walk("", doc)
	return seeds
}

func studyName(resolved []byte) string {
	var doc struct {
		Name string `toml:"name"`
	}
	toml.Unmarshal(resolved, &doc)
	return doc.Name
}

func (m *Manifest) update() {
	done, failed := 0, 0
	for _, s := range m.Models {
		switch s.Status {
		case StatusDone:
			done++
		case StatusFailed:
			failed++
		}
	}
	switch {
	case failed > 0:
		m.Status = StudyFailed
	case done == len(m.Models):
		m.Status = StudyComplete
	default:
		m.Status = StudyIncomplete
	}
}

func (m *Manifest) write(dir string) error {
	p, err := m.pending(dir)
	if err != nil {
		return err
	}
	return p.commit()
}

// pending writes the manifest, synced, under a temporary name.
func (m *Manifest) pending(dir string) (*pendingFile, error) {
	sort.Slice(m.Models, func(i, j int) bool { return m.Models[i].Index < m.Models[j].Index })
	data, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return nil, err
	}
	data = append(data, '\n')
	return writePending(filepath.Join(dir, "manifest.json"), func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	}, true)
}

// ReadManifest reads manifest.json of a run directory.
func ReadManifest(dir string) (*Manifest, error) {
	data, err := os.ReadFile(filepath.Join(dir, "manifest.json"))
	if err != nil {
		return nil, err
	}
	var m Manifest
	dec := json.NewDecoder(bytes.NewReader(data))
	if err := dec.Decode(&m); err != nil {
		return nil, fmt.Errorf("%s: %v", filepath.Join(dir, "manifest.json"), err)
	}
	return &m, nil
}

func jsonEncode(w *bytes.Buffer, m Manifest) error {
	data, err := json.MarshalIndent(m, "", "  ")
	w.Write(data)
	return err
}

// populationModelOf returns the population model of the study's models.
func populationModelOf(st *config.Study) string {
	if len(st.Models) == 0 {
		return transfer.Auto.String()
	}
	return st.Models[0].Params.Population.String()
}
