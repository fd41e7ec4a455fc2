package main

import (
	"fmt"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"headroom/gis"
	"headroom/hydraulics"
)

// SizingConfig chooses the size tables: the inside diameter of an existing
// main of each material (its class, when the layer gives none), and the
// material and class of a replacement main.
type SizingConfig struct {
	ReplacementMaterial string `toml:"replacement_material"`
	ReplacementClass    string `toml:"replacement_class"`
	// Existing maps a material, as the pipe layer spells it or as a size
	// table knows it ("DI", "ductile iron"), to the class its mains are
	// taken to be; the entries are added to the defaults, replacing the
	// default of the same material.
	Existing map[string]string `toml:"existing"`
}

// pipes.diameter_is values.
const (
	diameterIsNominal = "nominal" // the diameter field holds trade sizes; the inside diameter comes from a size table
	diameterIsInside  = "inside"  // the diameter field holds inside diameters, used as they are
)

// Defaults of [sizing]: a replacement main is AWWA C900 DR18 PVC, as in
// earlier runs; existing mains are taken as the usual product of each
// material: DR18 PVC, cement-lined Pressure Class 350 ductile iron (the
// class DOMAIN.md §5.2 tabulates for every size) and old cast iron at its
// nominal ID (DOMAIN.md §5.4, the modelling convention).
const (
	sizeDefaultReplacementMaterial = "PVC"
	sizeDefaultReplacementClass    = "DR18"
)

var sizeDefaultExisting = []struct{ material, class string }{
	{"CI", "nominal"}, {"DI", "PC350"}, {"PVC", "DR18"},
}

// sizeEntry is one resolved [sizing.existing] entry.
type sizeEntry struct {
	key      string // the material as written in the config
	material string // the table material the key names ("" when it is a layer spelling only)
	table    hydraulics.PipeClass
}

// sizeValidate sets the [sizing] defaults and checks the keys.
func (c *Config) sizeValidate() []error {
	var errs []error
	switch c.Pipes.DiameterIs {
	case "":
		c.Pipes.DiameterIs = diameterIsNominal
	case diameterIsNominal, diameterIsInside:
	default:
		errs = append(errs, fmt.Errorf("pipes.diameter_is = %q: use %q (the layer holds trade sizes; inside diameters come from [sizing.existing]) or %q (it holds inside diameters)",
			c.Pipes.DiameterIs, diameterIsNominal, diameterIsInside))
	}
	s := &c.Sizing
	if s.ReplacementMaterial == "" && s.ReplacementClass == "" {
		s.ReplacementMaterial, s.ReplacementClass = sizeDefaultReplacementMaterial, sizeDefaultReplacementClass
	}
	if s.ReplacementMaterial == "" || s.ReplacementClass == "" {
		errs = append(errs, fmt.Errorf("sizing.replacement_material = %q and sizing.replacement_class = %q: give both (default %q and %q)",
			s.ReplacementMaterial, s.ReplacementClass, sizeDefaultReplacementMaterial, sizeDefaultReplacementClass))
	} else if _, err := hydraulics.SizeTable(s.ReplacementMaterial, s.ReplacementClass); err != nil {
		errs = append(errs, fmt.Errorf("sizing.replacement_material = %q, replacement_class = %q: %w", s.ReplacementMaterial, s.ReplacementClass, err))
	}
	_, more := c.sizeEntries()
	return append(errs, more...)
}

// sizeEntries merges [sizing.existing] into the defaults, in key order:
// an entry whose key names the material of a default replaces it.
func (c *Config) sizeEntries() ([]sizeEntry, []error) {
	var entries []sizeEntry
	for _, d := range sizeDefaultExisting {
		t, err := hydraulics.SizeTable(d.material, d.class)
		if err != nil { // cannot happen: TestSizeDefaults resolves every default
			continue
		}
		entries = append(entries, sizeEntry{key: d.material, material: d.material, table: t})
	}
	keys := make([]string, 0, len(c.Sizing.Existing))
	for k := range c.Sizing.Existing {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	var errs []error
	given := map[string]string{} // table material or key → the config key that set it
	for _, k := range keys {
		e, err := sizeResolve(k, c.Sizing.Existing[k])
		if err != nil {
			errs = append(errs, err)
			continue
		}
		id := e.material
		if id == "" {
			id = sizeMaterialKey(k)
		}
		if prev, dup := given[id]; dup {
			errs = append(errs, fmt.Errorf("sizing.existing: %q and %q name the same material; keep one", prev, k))
			continue
		}
		given[id] = k
		i := slices.IndexFunc(entries, func(x sizeEntry) bool {
			return (e.material != "" && x.material == e.material) || sizeMaterialKey(x.key) == sizeMaterialKey(k)
		})
		if i >= 0 {
			entries[i] = e
		} else {
			entries = append(entries, e)
		}
	}
	slices.SortStableFunc(entries, func(a, b sizeEntry) int { return strings.Compare(a.key, b.key) })
	return entries, errs
}

// sizeResolve finds the table of one [sizing.existing] entry: the key as a
// table material with the class, or else the class alone (for a key that
// is the layer's own spelling, such as "DUCTILE").
func sizeResolve(key, class string) (sizeEntry, error) {
	material, known := hydraulics.SizeMaterial(key)
	lookup := material
	if !known {
		lookup = ""
	}
	t, err := hydraulics.SizeTable(lookup, class)
	if err != nil {
		return sizeEntry{}, fmt.Errorf("sizing.existing.%s = %q: %w", strconv.Quote(key), class, err)
	}
	return sizeEntry{key: key, material: material, table: t}, nil
}

// sizeMaterialKey is a material spelling compared without regard to case
// or spacing.
func sizeMaterialKey(s string) string { return strings.ToUpper(strings.Join(strings.Fields(s), " ")) }

// sizeFor returns the entry for a pipe's material: the entry whose key is
// the material as spelt, or else the one for the table material it names.
func sizeFor(entries []sizeEntry, material string) (sizeEntry, bool) {
	key := sizeMaterialKey(material)
	if key == "" {
		return sizeEntry{}, false
	}
	for _, e := range entries {
		if sizeMaterialKey(e.key) == key {
			return e, true
		}
	}
	if m, ok := hydraulics.SizeMaterial(material); ok {
		for _, e := range entries {
			if e.material == m {
				return e, true
			}
		}
	}
	return sizeEntry{}, false
}

// replacementSizes are the sizes of [sizing] replacement_material and
// replacement_class, which Limits.Sizes offers a replacement main.
func (c *Config) replacementSizes() []hydraulics.Size {
	t, err := hydraulics.SizeTable(c.Sizing.ReplacementMaterial, c.Sizing.ReplacementClass)
	if err != nil { // validate rejected it; a Config built in code may skip validate
		return hydraulics.StandardSizes()
	}
	return t.Sizes
}

// replacementTable is the replacement main's table, for messages.
func (c *Config) replacementTable() hydraulics.PipeClass {
	t, err := hydraulics.SizeTable(c.Sizing.ReplacementMaterial, c.Sizing.ReplacementClass)
	if err != nil {
		t, _ = hydraulics.SizeTable(sizeDefaultReplacementMaterial, sizeDefaultReplacementClass)
	}
	return t
}

// sizeRead finds the inside diameter of every input pipe (r.inside) and
// the table it came from (r.sizeClass): with pipes.diameter_is = "inside"
// the recorded diameter; otherwise the inside diameter of the recorded
// nominal size in the table of the pipe's class (pipes.fields.class) or of
// its material's [sizing.existing] class. Where neither gives one, the
// nominal size is used as the inside diameter, with a problems.csv row: per
// pipe for a size or class not in the table, once per material for a
// material without a table.
func (r *result) sizeRead(c *gis.Collection) {
	cfg := r.cfg
	r.inside = make([]hydraulics.Length, len(r.pipes))
	r.sizeClass = make([]string, len(r.pipes))
	if cfg.Pipes.DiameterIs == diameterIsInside {
		for i, p := range r.pipes {
			r.inside[i], r.sizeClass[i] = p.Diameter, "as recorded"
		}
		return
	}
	entries, _ := cfg.sizeEntries() // validated with the config
	file := filepath.Base(cfg.Pipes.Path)
	classes, classFields := r.sizeLayerClasses(c)
	untabled := map[string]int{} // material spelling → pipes
	var untabledOrder []string
	for i, p := range r.pipes {
		r.inside[i] = p.Diameter
		if !p.Usable || p.Diameter <= 0 {
			continue
		}
		table, ok := r.sizeTableOf(i, entries, classes[i], classFields[i], file)
		if !ok {
			m := strings.TrimSpace(p.Material)
			if untabled[m] == 0 {
				untabledOrder = append(untabledOrder, m)
			}
			untabled[m]++
			r.sizeClass[i] = "nominal (no size table)"
			continue
		}
		s, ok := table.Size(p.Diameter)
		if !ok {
			r.sizeNoSize(file, p, table)
			r.sizeClass[i] = "nominal (" + table.Name() + " has no such size)"
			continue
		}
		r.inside[i], r.sizeClass[i] = s.Inside, table.Name()
	}
	for _, m := range untabledOrder {
		r.sizeNoTable(file, m, untabled[m])
	}
}

// sizeTableOf is the size table of input pipe i: its layer class (a class
// not of its material gets a problem row and the default), else its
// material's [sizing.existing] class.
func (r *result) sizeTableOf(i int, entries []sizeEntry, class, field, file string) (hydraulics.PipeClass, bool) {
	p := r.pipes[i]
	e, known := sizeFor(entries, p.Material)
	if class != "" {
		material := e.table.Material
		if !known {
			material, _ = hydraulics.SizeMaterial(p.Material) // "" finds the class alone
		}
		t, err := hydraulics.SizeTable(material, class)
		if err == nil {
			return t, true
		}
		action := "the nominal diameter is used as the inside diameter; correct the class, or map the material in [sizing.existing]"
		if known {
			action = fmt.Sprintf("inside diameter taken from %s, the [sizing.existing] class of the material; use one of %s", e.table.Name(), hydraulics.SizeClassList(e.table.Material))
		}
		r.problems = append(r.problems, gis.Problem{File: file, Feature: p.Index, ID: p.ID, Field: field,
			What:   fmt.Sprintf("class %q is not a size class of material %q", class, p.Material),
			Action: action})
	}
	return e.table, known
}

// sizeLayerClasses reads pipes.fields.class from each feature: the class
// text and the property name found ("" where the feature has none).
func (r *result) sizeLayerClasses(c *gis.Collection) (classes, fields []string) {
	classes, fields = make([]string, len(r.pipes)), make([]string, len(r.pipes))
	prop := r.cfg.Pipes.Fields.Class
	if prop == "" || c == nil || c.Features == nil {
		return classes, fields
	}
	found := false
	for i := range r.pipes {
		if i >= len(c.Features.Features) || c.Features.Features[i] == nil {
			continue
		}
		v, name := layerFlowLookup(c.Attrs(i), prop)
		fields[i] = name
		if v != nil {
			found = true
			classes[i] = strings.TrimSpace(needClassText(v))
		}
	}
	if !found {
		r.problems = append(r.problems, gis.Problem{File: c.File, Field: prop, What: "mapped field is in no feature",
			Action: "field ignored, so every main takes its material's [sizing.existing] class; check the config key pipes.fields.class"})
	}
	return classes, fields
}

// sizeNoSize reports a recorded nominal size that is not in the pipe's table.
func (r *result) sizeNoSize(file string, p gis.Pipe, t hydraulics.PipeClass) {
	s := r.cfg.system()
	sizes := make([]string, len(t.Sizes))
	for k, z := range t.Sizes {
		sizes[k] = strconv.FormatFloat(roundConfig(s.Diameter(z.Nominal)), 'f', -1, 64)
	}
	r.problems = append(r.problems, gis.Problem{File: file, Feature: p.Index, ID: p.ID, Field: r.cfg.Pipes.Fields.Diameter,
		What: fmt.Sprintf("diameter %s %s is not a standard size of %s (%s %s)",
			strconv.FormatFloat(roundConfig(s.Diameter(p.Diameter)), 'f', -1, 64), s.DiameterLabel(), t.Name(), strings.Join(sizes, ", "), s.DiameterLabel()),
		Action: `the nominal diameter is used as the inside diameter; correct the diameter or the class, or set pipes.diameter_is = "inside" if the layer holds inside diameters`})
}

// sizeNoTable reports, once per material, mains whose material has no size
// table: their nominal diameter is the inside diameter.
func (r *result) sizeNoTable(file, material string, n int) {
	what := fmt.Sprintf("material %q has no size table (%d main%s)", material, n, plural(n))
	if material == "" {
		what = fmt.Sprintf("%d main%s without a material have no size table", n, plural(n))
	}
	r.problems = append(r.problems, gis.Problem{File: file, Field: r.cfg.Pipes.Fields.Material, What: what,
		Action: "the nominal diameter is used as the inside diameter (the modelling convention); map the material to a class in [sizing.existing] if it is one of " +
			hydraulics.SizeClassList("")})
}

// sizeTemplate is the [sizing] section of the config template.
func sizeTemplate(c *Config) string {
	var b strings.Builder
	str := strconv.Quote
	rm, rc := orDefault(c.Sizing.ReplacementMaterial, sizeDefaultReplacementMaterial), orDefault(c.Sizing.ReplacementClass, sizeDefaultReplacementClass)
	fmt.Fprintf(&b, "[sizing]  # standard sizes and their inside diameters; tables: %s\n", hydraulics.SizeClassList(""))
	fmt.Fprintf(&b, "replacement_material = %s  # material of a replacement main; its sizes are the ones a required size is chosen from\n", str(rm))
	fmt.Fprintf(&b, "replacement_class = %s  # its class: PVC DR14, DR18, DR25 (AWWA C900); DI PC350, PC300 (AWWA C151, cement-lined; -DL double lining)\n", str(rc))
	b.WriteString("[sizing.existing]  # class of an existing main by material, when pipes.fields.class gives none (CI nominal: ID = nominal size)\n")
	entries, _ := c.sizeEntries()
	for _, e := range entries {
		fmt.Fprintf(&b, "%s = %s\n", str(e.key), str(e.table.Class))
	}
	b.WriteString("\n")
	return b.String()
}
