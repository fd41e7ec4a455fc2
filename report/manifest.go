package report

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
)

// Manifest is manifest.json: what produced a run, so that it can be
// reproduced and audited. Everything in it is determined by the inputs
// except Created.
type Manifest struct {
	Program string `json:"program"` // "headroom"
	Version string `json:"version"`
	// Created is when the run wrote its outputs (RFC 3339, UTC): the one
	// value that differs between two runs of the same inputs.
	Created string `json:"created"`
	Title   string `json:"title"`
	// Config is the configuration as used, every default filled in, keyed
	// as in the TOML file.
	Config map[string]any `json:"config"`
	Inputs []FileRecord   `json:"inputs"`
	// Counts are per input layer: features read, used and left out.
	Counts     []LayerCount    `json:"counts"`
	Scenarios  []ScenarioStats `json:"scenarios"`
	Outputs    []FileRecord    `json:"outputs"`
	Cautions   []string        `json:"cautions"`
	Totals     []Total         `json:"totals,omitempty"`
	GoVersion  string          `json:"go_version"`
	Platform   string          `json:"platform"`
	ConfigFile string          `json:"config_file"` // the config's path, or "built-in demo"
}

// FileRecord is one file read or written.
type FileRecord struct {
	Role   string `json:"role,omitempty"` // "pipes", "sources", ... for inputs
	Path   string `json:"path"`
	Bytes  int64  `json:"bytes"`
	SHA256 string `json:"sha256"`
}

// LayerCount is one input layer's features in and out; In = Used + LeftOut.
type LayerCount struct {
	Layer   string `json:"layer"`
	Path    string `json:"path"`
	In      int    `json:"in"`
	Used    int    `json:"used"`
	LeftOut int    `json:"left_out"`
	// Where says where each left-out feature's reason is written.
	Where string `json:"where,omitempty"`
}

// ScenarioStats are one solved scenario's solver figures, in the run's units
// (named in the keys' values: HeadUnit, FlowUnit).
type ScenarioStats struct {
	Name               string  `json:"name"`
	DemandFactor       float64 `json:"demand_factor"`
	Iterations         int     `json:"iterations"`
	Factorisations     int     `json:"factorisations"`
	RelativeFlowChange float64 `json:"relative_flow_change"`
	MaxHeadResidual    float64 `json:"max_head_residual"`
	HeadUnit           string  `json:"head_unit"`
	MaxNodeImbalance   float64 `json:"max_node_imbalance"`
	Supply             float64 `json:"supply"`
	Demand             float64 `json:"demand"`
	FlowUnit           string  `json:"flow_unit"`
	UnsuppliedNodes    int     `json:"unsupplied_nodes"`
}

// Total is one headline count or figure of the run's results.
type Total struct {
	Name  string  `json:"name"`
	Value float64 `json:"value"`
	Unit  string  `json:"unit,omitempty"`
}

// WriteManifest writes m as indented JSON. Keys of Config come out sorted
// (encoding/json sorts map keys), so the same manifest gives the same bytes.
func WriteManifest(w io.Writer, m *Manifest) error {
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return fmt.Errorf("encoding the manifest: %w", err)
	}
	b = append(b, '\n')
	_, err = w.Write(b)
	return err
}

// ReadManifest decodes a manifest written by WriteManifest.
func ReadManifest(r io.Reader) (*Manifest, error) {
	var m Manifest
	if err := json.NewDecoder(r).Decode(&m); err != nil {
		return nil, fmt.Errorf("decoding the manifest: %w", err)
	}
	return &m, nil
}

// HashFile returns a FileRecord for path: its size and SHA-256 (FIPS 180-4),
// hex-encoded. The record's Path is name, as the manifest shows it.
func HashFile(path, name, role string) (FileRecord, error) {
	f, err := os.Open(path)
	if err != nil {
		return FileRecord{}, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return FileRecord{}, fmt.Errorf("reading %s: %w", path, err)
	}
	return FileRecord{Role: role, Path: name, Bytes: n, SHA256: hex.EncodeToString(h.Sum(nil))}, nil
}
