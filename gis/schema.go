package gis

import (
	"cmp"
	"errors"
	"fmt"
	"slices"
	"strings"

	"github.com/paulmach/orb/geojson"

	"headroom/hydraulics"
)

// PipeSchema maps pipe properties to their meaning. Property names are
// matched exactly, or else case-insensitively when exactly one property
// matches that way. "" means not mapped, allowed only for optional fields.
type PipeSchema struct {
	ID, Diameter, Material, InstallYear string   // required
	DiameterUnit                        string   // "in" (default when "") or "mm"
	MeasuredC                           string   // optional: a positive number overrides aging; null, "", 0 = none
	Status                              string   // optional
	ClosedValues                        []string // status values meaning closed, case-insensitive; nil = {"closed"}
	CheckValues                         []string // status values marking a check valve (flow first vertex → last only), case-insensitive; nil = none
	Zone                                string   // optional
	Street                              string   // optional: street name
	Surface                             string   // optional: surface or road class, free text
	Length                              string   // optional: a positive value overrides the geodesic length
	LengthUnit                          string   // "ft" (default) or "m"
}

// SourceSchema maps source properties. Grade, the hydraulic grade held
// (water-surface elevation or set head), is required; GradeUnit is "ft"
// (default) or "m". ID and Name are optional.
type SourceSchema struct {
	ID, Name, Grade string
	GradeUnit       string
	// Optional per-scenario grades (in GradeUnit; an empty value means the
	// Grade field's) and pump curve points (see SourceControls).
	GradeMaxDay, GradePeakHour, GradeFire                                     string
	PumpShutoffHead, PumpDesignFlow, PumpDesignHead, PumpMaxFlow, PumpMaxHead string
	PumpFlowUnit                                                              string // "gpm" (default), "lps", "mgd" or "cfs"
}

// DemandSchema maps demand properties. Demand (average day) is required;
// DemandUnit is "gpm" (default), "lps", "mgd" or "cfs". ID is optional.
type DemandSchema struct {
	ID, Demand string
	DemandUnit string
}

// ElevationSchema maps elevation points. Elevation is required;
// ElevationUnit is "ft" (default) or "m".
type ElevationSchema struct {
	Elevation     string
	ElevationUnit string
}

// fieldSpec is one mapped field of a schema: its config key (for messages),
// the property name and whether it is required.
type fieldSpec struct {
	key      string // config key, e.g. "pipes.fields.diameter"
	prop     string // property name in the layer, "" if not mapped
	required bool
	isID     bool // the feature's own "id" member stands in when the property is absent
}

// checkFields returns a fatal error for a required field that is not mapped
// or present in no feature, and a Problem for an optional one present in no
// feature.
func checkFields(c *Collection, specs []fieldSpec) ([]Problem, error) {
	file, fc := c.File, c.Features
	var probs []Problem
	for _, s := range specs {
		if s.prop == "" {
			if s.required {
				return nil, &FieldError{File: file, Err: fmt.Errorf("required field is not mapped; set the config key %s", s.key)}
			}
			continue
		}
		found := false
		for i, f := range fc.Features {
			if _, _, ok := lookup(c.Attrs(i), s.prop); ok || (s.isID && f.ID != nil) {
				found = true
				break
			}
		}
		if found {
			continue
		}
		if s.required {
			return nil, &FieldError{File: file, Field: s.prop,
				Err: fmt.Errorf("is in no feature; check the config key %s", s.key)}
		}
		probs = append(probs, Problem{File: file, Field: s.prop,
			What:   "mapped field is in no feature",
			Action: "field ignored; check the config key " + s.key})
	}
	return probs, nil
}

// lookup finds property name in a: exactly, or else the one property
// whose name matches case-insensitively (see Attrs.Lookup).
func lookup(a Attrs, name string) (any, string, bool) { return a.Lookup(name) }

// lengthUnit returns the length of one unit named u ("ft" default, "m").
func lengthUnit(u, key string) (hydraulics.Length, error) {
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "", "ft", "feet", "foot":
		return hydraulics.Foot, nil
	case "m", "metre", "metres", "meter", "meters":
		return hydraulics.Metre, nil
	}
	return 0, fmt.Errorf("unit %q is not \"ft\" or \"m\"; check the config key %s", u, key)
}

// diameterUnit returns the length of one unit named u ("in" default, "mm").
func diameterUnit(u, key string) (hydraulics.Length, error) {
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "", "in", "inch", "inches":
		return hydraulics.Inch, nil
	case "mm":
		return hydraulics.Millimetre, nil
	}
	return 0, fmt.Errorf("unit %q is not \"in\" or \"mm\"; check the config key %s", u, key)
}

// FlowUnit returns the flow of one unit named u: "gpm" (the default for
// ""), "lps" or "l/s", "mgd", "cfs", "m3s" or "m3/s". key is the config key
// that named it, for the message.
func FlowUnit(u, key string) (hydraulics.Flow, error) { return flowUnit(u, key) }

func flowUnit(u, key string) (hydraulics.Flow, error) {
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "", "gpm":
		return hydraulics.USGallonPerMinute, nil
	case "lps", "l/s":
		return hydraulics.LitrePerSecond, nil
	case "mgd":
		return hydraulics.MillionGallonsPerDay, nil
	case "cfs":
		return hydraulics.CubicFootPerSecond, nil
	case "m3s", "m3/s":
		return hydraulics.CubicMetrePerSecond, nil
	}
	return 0, fmt.Errorf("unit %q is not \"gpm\", \"lps\", \"mgd\", \"cfs\" or \"m3s\"; check the config key %s", u, key)
}

// ErrNoUsable is wrapped by the error returned when a layer has features but
// none of them can be used.
var ErrNoUsable = errors.New("no usable feature")

// checkCRS refuses a layer whose old-style "crs" member names a coordinate
// system other than geographic lon/lat on WGS84 (or NAD83, the same to about
// 1–2 m): RFC 7946 GeoJSON is always WGS84 lon/lat, and projected
// coordinates would be read as degrees.
func checkCRS(file string, fc *geojson.FeatureCollection) error {
	crs, ok := fc.ExtraMembers["crs"]
	if !ok || crs == nil {
		return nil
	}
	name := ""
	if m, ok := crs.(map[string]any); ok {
		if p, ok := m["properties"].(map[string]any); ok {
			name, _ = p["name"].(string)
		}
	}
	up := strings.ToUpper(name)
	for _, ok := range []string{"CRS84", "CRS83", "EPSG:4326", "EPSG::4326", "EPSG:4269", "EPSG::4269"} {
		if strings.HasSuffix(up, ok) {
			return nil
		}
	}
	if name == "" {
		name = shortJSON(crs)
	}
	return &FieldError{File: file, Field: "crs", Err: fmt.Errorf("coordinate system %s is not lon/lat WGS84; export the layer as GeoJSON in EPSG:4326", name)}
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, cmp.Compare)
	return keys
}
