package main

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"sync"
	"time"

	"github.com/BurntSushi/toml"
	"github.com/paulmach/orb/geojson"

	"headroom/gis"
	"headroom/report"
)

// version is headroom's release, written into the manifest and the report.
const version = "0.8.0"

// withManifest returns outs, each now hashing its staged files (every
// part of a shapefile) as soon as it has written them, followed by
// manifest.json, written last with those SHA-256s: each is of the bytes
// that are then renamed into place. The hashes are taken while the other
// outputs are still being written, and the inputs' from now on, so that
// the manifest does not read two gigabytes alone at the end of a large run.
func (r *result) withManifest(outs []output) []output {
	h := &stagedHashes{outs: map[string]report.FileRecord{}, inputsDone: make(chan struct{})}
	go func() {
		defer close(h.inputsDone)
		h.inputs, h.inputsErr = r.inputRecords(r.in)
	}()
	hashed := make([]output, len(outs))
	for k, o := range outs {
		hashed[k] = output{o.name, func(path string) error {
			if err := o.write(path); err != nil {
				return err
			}
			return h.hashStaged(filepath.Dir(path), o.name)
		}}
	}
	return append(hashed, output{"manifest.json", func(path string) error {
		m, err := r.manifest(filepath.Dir(path), outs, h)
		if err != nil {
			return err
		}
		return gis.WriteFileAtomic(path, func(w io.Writer) error { return report.WriteManifest(w, m) })
	}})
}

// stagedHashes are the SHA-256 records of the staged outputs, by file
// name, and of the inputs once inputsDone is closed.
type stagedHashes struct {
	mu         sync.Mutex
	outs       map[string]report.FileRecord
	inputsDone chan struct{}
	inputs     []report.FileRecord
	inputsErr  error
}

// hashStaged records the hash of every file output name produced in stage.
func (h *stagedHashes) hashStaged(stage, name string) error {
	for _, f := range producedFiles(name) {
		p := filepath.Join(stage, f)
		if _, err := os.Stat(p); os.IsNotExist(err) {
			continue // a shapefile part not written (no .prj)
		}
		rec, err := stagedRecord(p, f)
		if err != nil {
			return fmt.Errorf("hashing %s for the manifest: %w", f, err)
		}
		h.mu.Lock()
		h.outs[f] = rec
		h.mu.Unlock()
	}
	return nil
}

// stagedRecord is the manifest's record of the staged file at p, named f:
// its size and SHA-256 as gis.WriteFileAtomic worked them out while writing
// it, or read back from the file (past the page cache: gis.FileDigest) when
// another writer made it (the GeoPackages, finished by SQLite).
func stagedRecord(p, f string) (report.FileRecord, error) {
	d, ok := gis.WrittenDigest(p)
	if !ok {
		var err error
		if d, err = gis.FileDigest(p); err != nil {
			return report.FileRecord{}, err
		}
	}
	return report.FileRecord{Path: f, Bytes: d.Bytes, SHA256: hex.EncodeToString(d.SHA256[:])}, nil
}

// manifest gathers the run's record: version, the time, the config as used,
// every input with its SHA-256, the counts, each scenario's solver figures
// and every output staged in stage, with the hashes in h (an output's file
// that h lacks is hashed here).
func (r *result) manifest(stage string, outs []output, h *stagedHashes) (*report.Manifest, error) {
	cfgMap, err := configAsUsed(r.cfg)
	if err != nil {
		return nil, err
	}
	m := &report.Manifest{
		Program: "headroom", Version: version, Created: manifestTime(), Title: r.title,
		Config: cfgMap, Cautions: cautions, GoVersion: runtime.Version(), Platform: runtime.GOOS + "/" + runtime.GOARCH,
		ConfigFile: r.cfg.file,
	}
	<-h.inputsDone
	if m.Inputs, err = h.inputs, h.inputsErr; err != nil {
		return nil, err
	}
	for _, a := range r.accounts() {
		m.Counts = append(m.Counts, report.LayerCount{Layer: a.noun, Path: a.path, In: a.in, Used: a.used, LeftOut: a.leftOut, Where: a.where})
	}
	m.Scenarios = r.scenarioStats()
	for _, o := range outs {
		for _, f := range producedFiles(o.name) {
			h.mu.Lock()
			rec, ok := h.outs[f]
			h.mu.Unlock()
			if !ok {
				p := filepath.Join(stage, f)
				if _, err := os.Stat(p); os.IsNotExist(err) {
					continue // a shapefile part not written (no .prj)
				}
				if rec, err = stagedRecord(p, f); err != nil {
					return nil, fmt.Errorf("manifest: %w", err)
				}
			}
			m.Outputs = append(m.Outputs, rec)
		}
	}
	return m, nil
}

// manifestTime is now in UTC, RFC 3339, or SOURCE_DATE_EPOCH when set (the
// reproducible-builds.org convention: seconds since 1970), so that a run
// can be made byte-identical including the manifest.
func manifestTime() string {
	if s := os.Getenv("SOURCE_DATE_EPOCH"); s != "" {
		if sec, err := strconv.ParseInt(s, 10, 64); err == nil {
			return time.Unix(sec, 0).UTC().Format(time.RFC3339)
		}
	}
	return time.Now().UTC().Format(time.RFC3339)
}

// configAsUsed is the config with every default filled in, keyed as in the
// TOML file: the template writer writes every key with its value in force
// (template.go), and decoding that text gives the map.
func configAsUsed(c *Config) (map[string]any, error) {
	var b bytes.Buffer
	if err := writeConfig(&b, c); err != nil {
		return nil, err
	}
	m := map[string]any{}
	if _, err := toml.Decode(b.String(), &m); err != nil {
		return nil, fmt.Errorf("manifest: the config as used does not read back: %w", err)
	}
	return m, nil
}

// inputRecords are the files read, with size and SHA-256: the layers and
// the config. The built-in demo has no files: each layer is recorded as
// its GeoJSON encoding (orb's), generated in memory.
func (r *result) inputRecords(in *inputs) ([]report.FileRecord, error) {
	if in.pipes != nil {
		var recs []report.FileRecord
		for _, l := range []struct {
			role string
			fc   *geojson.FeatureCollection
		}{{"pipes", in.pipes}, {"sources", in.sources}, {"demands", in.demands}, {"elevations", in.elevations},
			{"hydrants", in.hydrants}, {"breaks", in.breaks}, {"facilities", in.facilities}} {
			if l.fc == nil {
				continue
			}
			b, err := json.Marshal(l.fc)
			if err != nil {
				return nil, fmt.Errorf("manifest: encoding the demo %s: %w", l.role, err)
			}
			sum := sha256.Sum256(b)
			recs = append(recs, report.FileRecord{Role: l.role, Path: "built-in demo " + l.role + " (GeoJSON, in memory)",
				Bytes: int64(len(b)), SHA256: hex.EncodeToString(sum[:])})
		}
		return recs, nil
	}
	cfg := r.cfg
	files := []struct{ role, path string }{{"config", filepath.Join(cfg.dir, cfg.file)}}
	for _, l := range append(cfg.layers(), cfg.hydrantLayer(),
		layerConfig{"breaks", cfg.Breaks.LayerFile}, layerConfig{"facilities", cfg.Facilities.LayerFile}) {
		if l.Path != "" {
			files = append(files, struct{ role, path string }{l.key, cfg.path(l.Path)})
		}
	}
	recs := make([]report.FileRecord, 0, len(files))
	for _, f := range files {
		rec, err := report.HashFile(f.path, f.path, f.role)
		if err != nil {
			return nil, fmt.Errorf("manifest: %w", err)
		}
		recs = append(recs, rec)
	}
	return recs, nil
}

// scenarioStats are the solver's figures per solved scenario, in the
// run's units.
func (r *result) scenarioStats() []report.ScenarioStats {
	if r.flowCheck != nil {
		return nil // flows came from the layer; nothing was solved
	}
	s := r.cfg.system()
	out := make([]report.ScenarioStats, len(r.scenarios))
	for i, sc := range r.scenarios {
		o := sc.sol
		out[i] = report.ScenarioStats{
			Name: sc.name, DemandFactor: sc.factor, Iterations: o.Iterations, Factorisations: o.Factorisations,
			RelativeFlowChange: o.RelativeFlowChange, MaxHeadResidual: s.Head(o.MaxHeadResidual), HeadUnit: s.LengthLabel(),
			MaxNodeImbalance: s.Flow(o.MaxContinuityResidual), Supply: s.Flow(o.Supply), Demand: s.Flow(o.Demand),
			FlowUnit: s.FlowLabel(), UnsuppliedNodes: len(o.Unsupplied),
		}
	}
	return out
}
