package hydraulics

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// PipeClass is one material and class of pipe (a PVC dimension ratio, a
// ductile-iron pressure class) with its standard nominal sizes and the inside
// diameter of each.
type PipeClass struct {
	Material string   // "PVC", "DI" or "CI"
	Class    string   // "DR18", "PC350", "nominal", ...
	Aliases  []string // other spellings of Class matched by SizeTable ("PC235" for DR18)
	Sizes    []Size   // ascending by nominal size
	Source   string   // the published values and the formula the IDs come from
}

// ErrNoSizeTable is wrapped by SizeTable when no table fits the material
// and class asked for.
var ErrNoSizeTable = errors.New("hydraulics: no size table")

// NominalTolerance is the relative difference within which a recorded
// diameter matches a table's nominal size: 2.5 %. It lets a layer in
// millimetres match the inch sizes through the usual metric designations
// (DN 200 for 8 in, 25 mm per inch: 1.6 % apart), while neighbouring
// standard sizes, at least 6 % apart, can never both match (common
// practice, no source).
const NominalTolerance = 0.025

// Size returns the table's size whose nominal size is nearest to nominal
// and within NominalTolerance of it, and false when none is.
func (c PipeClass) Size(nominal Length) (Size, bool) {
	best, found := Size{}, false
	for _, s := range c.Sizes {
		off := math.Abs(float64(s.Nominal - nominal))
		if off > NominalTolerance*float64(s.Nominal) {
			continue
		}
		if !found || off < math.Abs(float64(best.Nominal-nominal)) {
			best, found = s, true
		}
	}
	return best, found
}

// Inside returns the inside diameter of the table's size that matches the
// nominal size (see Size), and false when the table has no such size.
func (c PipeClass) Inside(nominal Length) (Length, bool) {
	s, ok := c.Size(nominal)
	return s.Inside, ok
}

// Name is the material and class, as in "PVC DR18".
func (c PipeClass) Name() string { return c.Material + " " + c.Class }

// clone returns c with slices of its own.
func (c PipeClass) clone() PipeClass {
	c.Aliases = append([]string(nil), c.Aliases...)
	c.Sizes = append([]Size(nil), c.Sizes...)
	return c
}

// SizeTables returns every built-in size table, in a fixed order: AWWA C900
// PVC DR14, DR18 and DR25; AWWA C151 ductile iron PC350 and PC300 with the
// standard and the double AWWA C104 cement lining; old cast iron. Each call
// returns fresh slices.
//
// HDPE has no table: its inside diameter depends on the OD series (DIPS or
// IPS) and on the maker's wall tolerance, and DOMAIN.md §5.4 asks for the
// manufacturer's ID.
func SizeTables() []PipeClass {
	tables := []PipeClass{
		c900Table(14, "PC305", "CL305"),
		c900Table(18, "PC235", "CL235", "CL150"),
		c900Table(25, "PC165", "CL165"),
		ductileTable(350, standardLining),
		ductileTable(300, standardLining),
		ductileTable(350, doubleLining),
		ductileTable(300, doubleLining),
		castIronTable(),
	}
	return tables
}

// sizeMaterials are the materials with tables and the spellings of each
// that SizeTable accepts (the aging table's aliases, and the common names).
var sizeMaterials = []struct {
	name    string
	aliases []string
}{
	{"PVC", []string{"C900", "PVC C900", "polyvinyl chloride"}},
	{"DI", []string{"DIP", "ductile iron", "CLDI", "ductile"}},
	{"CI", []string{"cast iron", "CIP", "unlined cast iron", "grey iron", "gray iron"}},
}

// SizeMaterial returns the table material ("PVC", "DI", "CI") that a
// material spelling names, ignoring case and spacing, and false when no
// table is for it.
func SizeMaterial(material string) (string, bool) {
	key := materialKey(material)
	if key == "" {
		return "", false
	}
	for _, m := range sizeMaterials {
		if materialKey(m.name) == key {
			return m.name, true
		}
		for _, a := range m.aliases {
			if materialKey(a) == key {
				return m.name, true
			}
		}
	}
	return "", false
}

// SizeTable returns the table of a material and class. The material may be
// any spelling SizeMaterial knows, or "" to find the class among all tables
// (an error if two materials have it). The class ignores case, spaces,
// hyphens and underscores ("dr 18", "DR-18"), takes "Class" and "Pressure
// Class" as "CL" and "PC", matches a table's aliases ("PC235" is DR18) and,
// as a bare number, the number of a name of the material ("18", "350").
// The returned table's slices are its own.
func SizeTable(material, class string) (PipeClass, error) {
	mat := ""
	if strings.TrimSpace(material) != "" {
		m, ok := SizeMaterial(material)
		if !ok {
			return PipeClass{}, fmt.Errorf("%w for material %q: tables exist for %s", ErrNoSizeTable, material, sizeMaterialList())
		}
		mat = m
	}
	var found []PipeClass
	for _, t := range SizeTables() {
		if (mat == "" || t.Material == mat) && classMatches(t, class) {
			found = append(found, t)
		}
	}
	switch {
	case len(found) == 1:
		return found[0].clone(), nil
	case len(found) > 1:
		return PipeClass{}, fmt.Errorf("%w: class %q is a class of %s and of %s; give the material too", ErrNoSizeTable, class, found[0].Material, found[1].Material)
	case mat == "":
		return PipeClass{}, fmt.Errorf("%w: class %q is no class of a table (%s)", ErrNoSizeTable, class, SizeClassList(""))
	}
	return PipeClass{}, fmt.Errorf("%w: class %q is not a class of %s (classes: %s)", ErrNoSizeTable, class, mat, SizeClassList(mat))
}

// SizeClassList lists the classes of a table material ("" for every
// table, each as "material class"), comma-separated, in table order.
func SizeClassList(material string) string {
	var names []string
	for _, t := range SizeTables() {
		switch {
		case material == "":
			names = append(names, t.Name())
		case t.Material == material:
			names = append(names, t.Class)
		}
	}
	return strings.Join(names, ", ")
}

func sizeMaterialList() string {
	names := make([]string, len(sizeMaterials))
	for i, m := range sizeMaterials {
		names[i] = m.name
	}
	return strings.Join(names, ", ")
}

// classMatches reports whether class names t, by its class or an alias,
// or by their number alone.
func classMatches(t PipeClass, class string) bool {
	key := classKey(class)
	if key == "" {
		return false
	}
	for _, name := range append([]string{t.Class}, t.Aliases...) {
		k := classKey(name)
		if k == key || (isDigits(key) && strings.TrimLeft(k, "ABCDEFGHIJKLMNOPQRSTUVWXYZ") == key) {
			return true
		}
	}
	return false
}

// classKey is a class spelling reduced to upper-case letters and digits,
// with "PRESSURECLASS" shortened to "PC" and "CLASS" to "CL".
func classKey(s string) string {
	var b strings.Builder
	for _, r := range strings.ToUpper(s) {
		if (r >= 'A' && r <= 'Z') || (r >= '0' && r <= '9') {
			b.WriteRune(r)
		}
	}
	k := b.String()
	switch {
	case strings.HasPrefix(k, "PRESSURECLASS"):
		k = "PC" + k[len("PRESSURECLASS"):]
	case strings.HasPrefix(k, "CLASS"):
		k = "CL" + k[len("CLASS"):]
	}
	return k
}

func isDigits(s string) bool {
	for _, r := range s {
		if r < '0' || r > '9' {
			return false
		}
	}
	return s != ""
}

// materialKey is a material spelling in upper case with single spaces.
func materialKey(s string) string { return strings.ToUpper(strings.Join(strings.Fields(s), " ")) }

// c900Table is AWWA C900 PVC of dimension ratio dr on the cast-iron OD
// series (castIronOD, 4–64 in), at minimum wall:
//
//	ID = OD · (1 − 2/DR)
//
// DOMAIN.md §5.3: DR = OD / minimum wall; DR14 = PC305, DR18 = PC235 (the
// pre-2007 "Class 150"), DR25 = PC165; DR18 IDs 4.267, 6.133, 8.044, 9.867,
// 11.733 in for 4–12 in. C900 covers 4–60 in (DOMAIN.md §5.1) and the
// standard's range per DR is not given there; as in StandardSizes, the
// 64-in entry applies the ratio to the 64-in ductile-iron OD as a planning
// figure. Average-wall IDs are about 0.5–1 % smaller.
func c900Table(dr float64, aliases ...string) PipeClass {
	t := PipeClass{
		Material: "PVC",
		Class:    fmt.Sprintf("DR%g", dr),
		Aliases:  aliases,
		Source: fmt.Sprintf("AWWA C900 DR%g on the cast-iron OD series (OD per DOMAIN.md §5.2, a public county spec); "+
			"ID = OD·(1 − 2/DR) at minimum wall (DOMAIN.md §5.3)", dr),
	}
	for _, s := range castIronOD {
		t.Sizes = append(t.Sizes, Size{Nominal: Length(s.nominal) * Inch, Inside: Length(s.od*(1-2/dr)) * Inch})
	}
	return t
}

// ductileIron is AWWA C151 ductile iron: outside diameter and nominal wall
// of Pressure Class 350 and 300, inches (DOMAIN.md §5.2, confirmed in a
// public county utility spec, Table 6.1). The spec gives PC300 walls from
// 14 in up; below 14 in the table's only wall is PC350's, and PC350 is
// the lightest class made in 3–12 in (from memory of AWWA C151), so PC300
// tables take the PC350 wall there.
var ductileIron = []struct{ nominal, od, wall350, wall300 float64 }{
	{3, 3.96, 0.25, 0}, {4, 4.80, 0.25, 0}, {6, 6.90, 0.25, 0}, {8, 9.05, 0.25, 0},
	{10, 11.10, 0.26, 0}, {12, 13.20, 0.28, 0}, {14, 15.30, 0.31, 0.30},
	{16, 17.40, 0.34, 0.32}, {18, 19.50, 0.36, 0.34}, {20, 21.60, 0.38, 0.36},
	{24, 25.80, 0.43, 0.40}, {30, 32.00, 0.49, 0.45}, {36, 38.30, 0.56, 0.51},
	{42, 44.50, 0.63, 0.52}, {48, 50.80, 0.70, 0.64}, {54, 57.56, 0.79, 0.72},
	{60, 61.61, 0.83, 0.76}, {64, 65.67, 0.87, 0.80},
}

// liningKind is an AWWA C104 cement-mortar lining thickness.
type liningKind int

const (
	standardLining liningKind = iota
	doubleLining
)

// liningThickness is the AWWA C104/A21.4 cement-mortar lining of a
// ductile-iron pipe, inches: standard 1/16 in for 3–12 in, 3/32 in for
// 14–24 in, 1/8 in for 30–64 in; double thickness twice that (DOMAIN.md
// §2.5; the double values confirmed in a public bid spec).
func liningThickness(nominalIn float64, k liningKind) float64 {
	t := 1.0 / 16
	switch {
	case nominalIn >= 30:
		t = 1.0 / 8
	case nominalIn >= 14:
		t = 3.0 / 32
	}
	if k == doubleLining {
		t *= 2
	}
	return t
}

// ductileTable is AWWA C151 ductile iron of a pressure class with a cement
// lining:
//
//	ID = OD − 2·wall − 2·lining
//
// (DOMAIN.md §5.2: with the standard lining 4.175, 6.275, 8.425, 10.455,
// 12.515 in for 4–12 in PC350; manufacturers' IDs differ slightly by
// tolerance).
func ductileTable(pc int, k liningKind) PipeClass {
	t := PipeClass{
		Material: "DI",
		Class:    fmt.Sprintf("PC%d", pc),
		Aliases:  []string{fmt.Sprintf("CL%d", pc)},
		Source: fmt.Sprintf("AWWA C151 Pressure Class %d, OD and nominal wall per DOMAIN.md §5.2 (a public county spec)", pc) +
			"; AWWA C104 standard cement lining (DOMAIN.md §2.5); ID = OD − 2·wall − 2·lining",
	}
	if pc == 300 {
		t.Source += "; 3–12 in take the PC350 wall, the lightest class made there"
	}
	if k == doubleLining {
		t.Class += "-DL"
		t.Aliases = []string{t.Aliases[0] + "-DL"}
		t.Source = strings.Replace(t.Source, "standard cement lining", "double-thickness cement lining", 1)
	}
	for _, d := range ductileIron {
		wall := d.wall350
		if pc == 300 && d.wall300 > 0 {
			wall = d.wall300
		}
		id := d.od - 2*wall - 2*liningThickness(d.nominal, k)
		t.Sizes = append(t.Sizes, Size{Nominal: Length(d.nominal) * Inch, Inside: Length(id) * Inch})
	}
	return t
}

// oldCastIronNominal are the nominal sizes of old cast-iron mains, inches:
// the US water-main sizes to 60 in, with the 2- and 3-in small mains
// (DOMAIN.md §5.1).
var oldCastIronNominal = []float64{2, 3, 4, 6, 8, 10, 12, 14, 16, 18, 20, 24, 30, 36, 42, 48, 54, 60}

// castIronTable is pit-cast and early spun cast iron (the AWWA C106/C108
// era, classes A–D by pressure), whose IDs were close to the nominal size
// when new (6 in ≈ 6.0–6.1 in, 8 in ≈ 8.1 in); the modelling convention
// takes ID = nominal and folds the loss to tuberculation into an aged C
// (DOMAIN.md §5.4, from memory). The classes share the one table.
func castIronTable() PipeClass {
	t := PipeClass{
		Material: "CI",
		Class:    "nominal",
		Aliases:  []string{"A", "B", "C", "D", "CLA", "CLB", "CLC", "CLD"},
		Source:   "old cast iron, classes A–D: ID = nominal size, the modelling convention with the tuberculation in an aged C (DOMAIN.md §5.4)",
	}
	for _, n := range oldCastIronNominal {
		t.Sizes = append(t.Sizes, Size{Nominal: Length(n) * Inch, Inside: Length(n) * Inch})
	}
	return t
}
