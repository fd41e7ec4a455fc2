package main

import (
	"fmt"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
)

// Where a hydrant's needed fire flow came from (the needed_basis column of
// the hydrants layer), in order of precedence.
const (
	needBasisField   = "field"          // the hydrant's own hydrants.fields.needed_flow
	needBasisLandUse = "land-use table" // its hydrants.fields.land_use class in the fire_flow table
	needBasisDefault = "default"        // fire_flow.needed_gpm
)

// needClass is one row of the needed-fire-flow table by land use.
type needClass struct {
	class  string
	flow   hydraulics.Flow // m³/s
	source string          // where a built-in figure comes from; "" for the config's own
}

// needDefaults is the built-in table, used when hydrants.fields.land_use is
// mapped and the config gives no table. The figures are placeholders that
// the fire authority's replace (DOMAIN.md §4.1 and §8 item 5; IFC Appendix
// B applies only where a jurisdiction adopts it):
//   - residential: 1,000 gpm, IFC B105.1 for one- and two-family dwellings
//     with a fire-flow area up to 3,600 ft² [confirmed in DOMAIN.md §4.1];
//   - residential_sprinklered: 500 gpm, the 50 % reduction the 2012 text of
//     B105.1 allows for a sprinklered dwelling [confirmed in DOMAIN.md §4.1];
//   - commercial, industrial: 1,500 gpm, the smallest figure of Table
//     B105.1(2) that B105.2 applies to other buildings (1,500–8,000 gpm by
//     construction type and area) [range confirmed in DOMAIN.md §4.1]; a
//     floor, not a typical value.
var needDefaults = []struct {
	class  string
	gpm    float64
	source string
}{
	{"commercial", 1500, "IFC B105.2: smallest figure of Table B105.1(2), other buildings"},
	{"industrial", 1500, "IFC B105.2: smallest figure of Table B105.1(2), other buildings"},
	{"residential", 1000, "IFC B105.1: one- and two-family dwellings up to 3,600 ft²"},
	{"residential_sprinklered", 500, "IFC B105.1 (2012): 50 % reduction for a sprinklered dwelling"},
}

// needTableKeys are the two spellings of the table's config key.
const (
	needKeyGpm = "fire_flow.needed_gpm_by_land_use"
	needKeyLps = "fire_flow.needed_lps_by_land_use"
)

// needTableKey is the table's key in the run's unit system, for messages.
func (c *Config) needTableKey() string {
	if c.system() == hydraulics.SI {
		return needKeyLps
	}
	return needKeyGpm
}

// needDefaultKey is fire_flow.needed_gpm (or _lps in an SI run), for messages.
func (c *Config) needDefaultKey() string {
	if c.system() == hydraulics.SI {
		return c.fireNeeded().siKey
	}
	return c.fireNeeded().usKey
}

// needTable returns the needed-fire-flow table by land use, sorted by
// class: the config's table (fire_flow.needed_gpm_by_land_use, or its
// _lps_ twin) when it gives one, which replaces the built-in table whole,
// else needDefaults. Each flow must be finite, > 0 and at most
// gis.MaxNeededFireFlow (12,000 gpm, the ISO ceiling, DOMAIN.md §4.2);
// classes are matched without regard to case, so two classes that differ
// only in case are an error, as is giving both spellings.
func (c *Config) needTable() ([]needClass, error) {
	f := c.FireFlow
	var raw map[string]float64
	key, unit, unitName := needKeyGpm, gpm, "gpm"
	switch {
	case f.NeededGpmByLandUse != nil && f.NeededLpsByLandUse != nil:
		return nil, fmt.Errorf("both [%s] and [%s] are given: keep one", needKeyGpm, needKeyLps)
	case f.NeededGpmByLandUse != nil:
		raw = f.NeededGpmByLandUse
	case f.NeededLpsByLandUse != nil:
		raw, key, unit, unitName = f.NeededLpsByLandUse, needKeyLps, lps, "lps"
	default:
		out := make([]needClass, len(needDefaults))
		for i, d := range needDefaults {
			out[i] = needClass{class: d.class, flow: hydraulics.Flow(d.gpm * gpm), source: d.source}
		}
		return out, nil
	}
	classes := make([]string, 0, len(raw))
	for class := range raw {
		classes = append(classes, class)
	}
	slices.SortFunc(classes, needCompare) // so the first error named is always the same
	out := make([]needClass, 0, len(raw))
	for _, class := range classes {
		v := raw[class]
		q := hydraulics.Flow(v * unit)
		switch {
		case strings.TrimSpace(class) == "":
			return nil, fmt.Errorf("[%s]: a class name is empty; name the land-use class as the hydrant layer spells it", key)
		case math.IsNaN(v) || math.IsInf(v, 0) || !(v > 0):
			return nil, fmt.Errorf("[%s] %s = %g: must be a number > 0 (%s)", key, class, v, unitName)
		case q > gis.MaxNeededFireFlow:
			return nil, fmt.Errorf("[%s] %s = %g %s is above %.0f gpm, the ISO maximum; check the unit of the key",
				key, class, v, unitName, gis.MaxNeededFireFlow.GPM())
		}
		out = append(out, needClass{class: strings.TrimSpace(class), flow: q})
	}
	for i := 1; i < len(out); i++ {
		if strings.EqualFold(out[i-1].class, out[i].class) {
			return nil, fmt.Errorf("[%s]: classes %q and %q differ only in case, and classes are matched without regard to case; keep one",
				key, out[i-1].class, out[i].class)
		}
	}
	return out, nil
}

// needCompare orders class names without regard to case, then exactly.
func needCompare(a, b string) int {
	if c := strings.Compare(strings.ToLower(strings.TrimSpace(a)), strings.ToLower(strings.TrimSpace(b))); c != 0 {
		return c
	}
	return strings.Compare(a, b)
}

// needFind returns the table row whose class equals class without regard
// to case or surrounding spaces.
func needFind(table []needClass, class string) (needClass, bool) {
	class = strings.TrimSpace(class)
	for _, row := range table {
		if strings.EqualFold(row.class, class) {
			return row, true
		}
	}
	return needClass{}, false
}

// needLandUse reads the land-use class of each feature of layer c from
// the property prop (exactly, or else the one property that matches it
// without regard to case, as every mapped field is found): the class and
// the property name found, "" where the feature has none. A prop mapped but
// in no feature is reported once, as the other mapped fields are.
func needLandUse(c *gis.Collection, prop string) (classes, fields []string, probs []gis.Problem) {
	if prop == "" || c == nil || c.Features == nil {
		return nil, nil, nil
	}
	n := len(c.Features.Features)
	classes, fields = make([]string, n), make([]string, n)
	found := false
	for i, f := range c.Features.Features {
		if f == nil {
			continue
		}
		if v, name, ok := c.Attrs(i).Lookup(prop); ok {
			found = true
			classes[i], fields[i] = needClassText(v), name
		}
	}
	if !found {
		probs = append(probs, gis.Problem{File: c.File, Field: prop, What: "mapped field is in no feature",
			Action: "field ignored; check the config key hydrants.fields.land_use"})
	}
	return classes, fields, probs
}

// needClassText is a land-use value as text: a zoning code may be stored
// as a number (3 and 3.0 both give "3").
func needClassText(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return strings.TrimSpace(x)
	case float64:
		return strconv.FormatFloat(x, 'f', -1, 64)
	case float32:
		return strconv.FormatFloat(float64(x), 'f', -1, 32)
	case int, int32, int64, uint64:
		return fmt.Sprint(x)
	case bool:
		return strconv.FormatBool(x)
	}
	return strings.TrimSpace(fmt.Sprint(v))
}

// needAssign sets each hydrant's needed fire flow and its basis, by
// precedence: its own needed_flow field (Needed > 0) > its land-use class
// in the table > fire_flow.needed_gpm. A class the table lacks gets the
// default and one problem row naming the hydrant, the field and the class;
// a blank class is "not given", as a blank needed flow is.
func (c *Config) needAssign(hs []fireHydrant) []gis.Problem {
	def := hydraulics.Flow(c.si(c.fireNeeded()))
	table, _ := c.needTable() // validated with the config
	var probs []gis.Problem
	for k := range hs {
		h := &hs[k]
		switch row, ok := needFind(table, h.landUse); {
		case h.Needed > 0:
			h.needed, h.basis = hydraulics.Flow(h.Needed), needBasisField
		case ok && h.landUse != "":
			h.needed, h.basis = row.flow, needBasisLandUse
		default:
			h.needed, h.basis = def, needBasisDefault
			if h.landUse != "" {
				probs = append(probs, c.needUnknown(h, def))
			}
		}
	}
	return probs
}

// needUnknown is the problem row of a hydrant whose land-use class is not
// in the table.
func (c *Config) needUnknown(h *fireHydrant, def hydraulics.Flow) gis.Problem {
	s, defKey := c.system(), c.needDefaultKey()
	return gis.Problem{File: h.File, Feature: h.Index, ID: h.ID, Field: h.landUseField,
		What: fmt.Sprintf("land-use class %q is not in the needed-fire-flow table", h.landUse),
		Action: fmt.Sprintf("needed fire flow taken from %s (%s %s); add the class to [%s]",
			defKey, strconv.FormatFloat(roundConfig(s.Flow(def)), 'f', -1, 64), s.FlowSuffix(), c.needTableKey())}
}

// needBareKey matches a TOML bare key; other class names are quoted.
var needBareKey = regexp.MustCompile(`^[A-Za-z0-9_-]+$`)

// needTemplate is the table's section of the config template, in the run's
// unit spelling, each built-in figure with its source.
func needTemplate(c *Config) string {
	table, err := c.needTable()
	if err != nil { // validated with the config; show the built-in table
		saved := c.FireFlow
		c.FireFlow.NeededGpmByLandUse, c.FireFlow.NeededLpsByLandUse = nil, nil
		table, _ = c.needTable()
		c.FireFlow = saved
	}
	key, per, defKey := needKeyGpm, gpm, c.needDefaultKey()
	if c.system() == hydraulics.SI {
		key, per = needKeyLps, lps
	}
	var b strings.Builder
	fmt.Fprintf(&b, "[%s]  # needed fire flow by hydrants.fields.land_use class (matched in any case), used where a hydrant has no needed_flow of its own;\n", key)
	b.WriteString("# PLACEHOLDERS from IFC Appendix B (applies only where adopted): replace them with the fire authority's figures.\n")
	fmt.Fprintf(&b, "# A config table replaces this one whole; a class not in it takes %s and is listed in problems.csv.\n", defKey)
	for _, row := range table {
		name := row.class
		if !needBareKey.MatchString(name) {
			name = strconv.Quote(name)
		}
		fmt.Fprintf(&b, "%s = %s", name, strconv.FormatFloat(roundConfig(float64(row.flow)/per), 'g', -1, 64))
		if row.source != "" {
			fmt.Fprintf(&b, "  # %s", row.source)
		}
		b.WriteString("\n")
	}
	b.WriteString("\n")
	return b.String()
}

// needSummary is the run summary's line on where the hydrants' needed
// flows came from; "" without a hydrant layer (every junction then takes
// the default).
func (r *result) needSummary() string {
	if !r.hydrantLayer {
		return ""
	}
	var field, table, def int
	for _, h := range r.hydrants {
		switch h.basis {
		case needBasisField:
			field++
		case needBasisLandUse:
			table++
		default:
			def++
		}
	}
	s, key := r.cfg.system(), r.cfg.needDefaultKey()
	return fmt.Sprintf("  needed fire flow: %d from the layer's field, %d from the land-use table, %d from %s (%s %s)\n",
		field, table, def, key, strconv.FormatFloat(roundConfig(s.Flow(hydraulics.Flow(r.cfg.si(r.cfg.fireNeeded())))), 'f', -1, 64), s.FlowLabel())
}
