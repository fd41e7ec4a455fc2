package hydraulics

import (
	"errors"
	"math"
	"slices"
	"strings"
	"testing"
)

// sizeInsideIn returns the inside diameter in inches of a nominal size of a
// table, failing the test when the table or the size is missing.
func sizeInsideIn(t *testing.T, material, class string, nominalIn float64) float64 {
	t.Helper()
	tab, err := SizeTable(material, class)
	if err != nil {
		t.Fatalf("SizeTable(%q, %q): %v", material, class, err)
	}
	d, ok := tab.Inside(Length(nominalIn) * Inch)
	if !ok {
		t.Fatalf("%s has no %g-in size", tab.Name(), nominalIn)
	}
	return d.Inches()
}

func TestSizeInsideDiameters(t *testing.T) {
	cases := []struct {
		name            string
		material, class string
		nominalIn       float64
		wantIn, tolIn   float64
	}{
		// DOMAIN.md §5.3, IDs at minimum wall computed there (OD − 2·OD/18).
		{"PVC DR18 4 in", "PVC", "DR18", 4, 4.267, 0.0005},
		{"PVC DR18 6 in", "PVC", "DR18", 6, 6.133, 0.0005},
		{"PVC DR18 8 in", "PVC", "DR18", 8, 8.044, 0.0005},
		{"PVC DR18 10 in", "PVC", "DR18", 10, 9.867, 0.0005},
		{"PVC DR18 12 in", "PVC", "DR18", 12, 11.733, 0.0005},
		// DOMAIN.md §5.2, computed there with the standard 1/16-in lining.
		{"DI PC350 4 in", "DI", "PC350", 4, 4.175, 0.0005},
		{"DI PC350 6 in", "DI", "PC350", 6, 6.275, 0.0005},
		{"DI PC350 8 in", "DI", "PC350", 8, 8.425, 0.0005},
		{"DI PC350 10 in", "DI", "PC350", 10, 10.455, 0.0005},
		{"DI PC350 12 in", "DI", "PC350", 12, 12.515, 0.0005},
		// Independent calculations here from DOMAIN.md §5.2/§5.3 ODs and walls:
		// DR14 8 in: 9.05·(1 − 2/14) = 7.7571; DR25 8 in: 9.05·0.92 = 8.326.
		{"PVC DR14 8 in", "PVC", "DR14", 8, 9.05 * (1 - 2.0/14), 1e-9},
		{"PVC DR25 8 in", "PVC", "DR25", 8, 8.326, 1e-9},
		// DR18 24 in: 25.80·(1 − 1/9) = 22.9333.
		{"PVC DR18 24 in", "PVC", "DR18", 24, 25.80 * 8 / 9, 1e-9},
		// PC300 16 in: 17.40 − 2·0.32 − 2·3/32 = 16.5725 (3/32-in lining, 14–24 in).
		{"DI PC300 16 in", "DI", "PC300", 16, 16.5725, 1e-9},
		// PC350 16 in: 17.40 − 0.68 − 0.1875 = 16.5325.
		{"DI PC350 16 in", "DI", "PC350", 16, 16.5325, 1e-9},
		// PC350 30 in: 32.00 − 0.98 − 0.25 = 30.77 (1/8-in lining, 30–64 in).
		{"DI PC350 30 in", "DI", "PC350", 30, 30.77, 1e-9},
		// PC300 8 in takes the PC350 wall: 8.425.
		{"DI PC300 8 in", "DI", "PC300", 8, 8.425, 1e-9},
		// Double lining (DOMAIN.md §2.5, 1/8 in for 3–12 in): 9.05 − 0.5 − 0.25 = 8.30.
		{"DI PC350-DL 8 in", "DI", "PC350-DL", 8, 8.30, 1e-9},
		// 3/16 in for 14–24 in: 25.80 − 0.80 − 0.375 = 24.625.
		{"DI PC300-DL 24 in", "DI", "PC300-DL", 24, 24.625, 1e-9},
		// DOMAIN.md §5.4: old cast iron, modelling convention ID = nominal.
		{"CI nominal 6 in", "CI", "nominal", 6, 6, 1e-9},
		{"CI class B 8 in", "cast iron", "Class B", 8, 8, 1e-9},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := sizeInsideIn(t, c.material, c.class, c.nominalIn); math.Abs(got-c.wantIn) > c.tolIn {
				t.Errorf("ID %.5f in, want %.5f ± %g in", got, c.wantIn, c.tolIn)
			}
		})
	}
}

func TestSizeConveyanceAgainstNominal(t *testing.T) {
	// DOMAIN.md §5.1: (ID/nominal)^4.87 is ≈ 1.03 for 8-in PVC DR18 and
	// ≈ 1.29 for cement-lined 8-in DI; and §5.3: the PVC is the smaller inside.
	pvc := sizeInsideIn(t, "PVC", "DR18", 8)
	di := sizeInsideIn(t, "DI", "PC350", 8)
	if r := math.Pow(pvc/8, 4.87); math.Abs(r-1.03) > 0.005 {
		t.Errorf("8-in DR18 conveyance ratio %.4f, want 1.03", r)
	}
	if r := math.Pow(di/8, 4.87); math.Abs(r-1.29) > 0.005 {
		t.Errorf("8-in PC350 conveyance ratio %.4f, want 1.29", r)
	}
	if !(pvc < di) {
		t.Errorf("8-in DR18 %.3f in should be smaller inside than 8-in PC350 %.3f in", pvc, di)
	}
}

func TestSizeDR18MatchesStandardSizes(t *testing.T) {
	// The replacement sizes of earlier runs are AWWA C900 DR18: the table must
	// reproduce them exactly, so a default run is unchanged.
	tab, err := SizeTable("PVC", "DR18")
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(tab.Sizes, StandardSizes()) {
		t.Errorf("PVC DR18 table differs from StandardSizes:\n%v\n%v", tab.Sizes, StandardSizes())
	}
}

func TestSizeTablesWellFormed(t *testing.T) {
	// Common practice, no source: sizes ascend, the inside is positive and
	// below the outside, and a lower DR or a thicker lining is smaller inside.
	for _, tab := range SizeTables() {
		t.Run(tab.Name(), func(t *testing.T) {
			if tab.Source == "" || len(tab.Sizes) == 0 {
				t.Fatal("table without source or sizes")
			}
			for k, s := range tab.Sizes {
				if od := sizeTestOD(tab.Material, s.Nominal); !(s.Inside > 0) || !(s.Inside.Inches() < od) {
					t.Errorf("%.0f-in inside %.3f in is not between 0 and the OD %.2f in", s.Nominal.Inches(), s.Inside.Inches(), od)
				}
				if k > 0 && !(s.Nominal > tab.Sizes[k-1].Nominal && s.Inside > tab.Sizes[k-1].Inside) {
					t.Errorf("sizes not ascending at %.0f in", s.Nominal.Inches())
				}
			}
		})
	}
	for _, nominal := range []float64{4, 8, 12, 24, 48} {
		dr14, dr18, dr25 := sizeInsideIn(t, "PVC", "DR14", nominal), sizeInsideIn(t, "PVC", "DR18", nominal), sizeInsideIn(t, "PVC", "DR25", nominal)
		if !(dr14 < dr18 && dr18 < dr25) {
			t.Errorf("%g in: DR14 %.3f, DR18 %.3f, DR25 %.3f in not ascending", nominal, dr14, dr18, dr25)
		}
		std, dbl := sizeInsideIn(t, "DI", "PC350", nominal), sizeInsideIn(t, "DI", "PC350-DL", nominal)
		if !(dbl < std) {
			t.Errorf("%g in: double lining %.3f in not below standard %.3f in", nominal, dbl, std)
		}
	}
	// The DI and C900 tables share the cast-iron OD series (DOMAIN.md §5.3).
	for _, d := range ductileIron {
		for _, c := range castIronOD {
			if c.nominal == d.nominal && c.od != d.od {
				t.Errorf("%g in: DI OD %g, C900 OD %g", d.nominal, d.od, c.od)
			}
		}
	}
}

// sizeTestOD is the outside diameter in inches of a nominal size
// (DOMAIN.md §5.2 for DI and C900 PVC); old cast iron is taken as the
// nominal plus 1 in, as its walls were at least ½ in (a bound for the test only).
func sizeTestOD(material string, nominal Length) float64 {
	for _, d := range ductileIron {
		if material != "CI" && math.Abs(d.nominal-nominal.Inches()) < 1e-9 {
			return d.od
		}
	}
	return nominal.Inches() + 1
}

func TestSizeNominalMatching(t *testing.T) {
	tab, err := SizeTable("PVC", "DR18")
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name    string
		nominal Length
		want    float64 // nominal inches matched; 0 = no match
	}{
		{"exact 8 in", 8 * Inch, 8},
		{"DN 200 mm is 8 in", 200 * Millimetre, 8},   // 25 mm per inch, common practice
		{"DN 150 mm is 6 in", 150 * Millimetre, 6},   // common practice
		{"DN 300 mm is 12 in", 300 * Millimetre, 12}, // common practice
		{"7 in is no size", 7 * Inch, 0},             // between 6 and 8
		{"9 in is no size", 9 * Inch, 0},             // 11 % from 8 and 10
		{"2 in is below C900", 2 * Inch, 0},          // C900 starts at 4 in (DOMAIN.md §5.1)
		{"7.9 in rounds to 8 in", 7.9 * Inch, 8},     // 1.25 % off
		{"8.3 in is too far from 8", 8.3 * Inch, 0},  // 3.75 % off
		{"1 mm above 60 in still 60", 60*Inch + Millimetre, 60},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s, ok := tab.Size(c.nominal)
			if ok != (c.want > 0) || (ok && math.Abs(s.Nominal.Inches()-c.want) > 1e-9) {
				t.Errorf("Size(%.2f in) = %g in, %v; want %g in", c.nominal.Inches(), s.Nominal.Inches(), ok, c.want)
			}
			d, ok2 := tab.Inside(c.nominal)
			if ok2 != ok || d != s.Inside {
				t.Errorf("Inside disagrees with Size: %v %v", d, ok2)
			}
		})
	}
}

func TestSizeTableSpellings(t *testing.T) {
	cases := []struct {
		material, class string
		want            string // table name
	}{
		{"PVC", "DR18", "PVC DR18"},
		{"pvc", "dr 18", "PVC DR18"},
		{"C900", "DR-18", "PVC DR18"},
		{"PVC", "18", "PVC DR18"},
		{"PVC", "PC235", "PVC DR18"},              // DOMAIN.md §5.3: DR18 = Pressure Class 235
		{"PVC", "Pressure Class 235", "PVC DR18"}, // same
		{"PVC", "Class 150", "PVC DR18"},          // DOMAIN.md §5.3: pre-2007 "Class 150"
		{"PVC", "150", "PVC DR18"},
		{"PVC", "PC305", "PVC DR14"}, // DOMAIN.md §5.3
		{"PVC", "PC165", "PVC DR25"}, // DOMAIN.md §5.3
		{"Ductile Iron", "pc350", "DI PC350"},
		{"DIP", "CL 350", "DI PC350"},
		{"DI", "350", "DI PC350"},
		{"DI", "PC350 DL", "DI PC350-DL"},
		{"", "PC300", "DI PC300"},
		{"", "DR25", "PVC DR25"},
		{"CIP", "nominal", "CI nominal"},
		{"cast  iron", "A", "CI nominal"},
	}
	for _, c := range cases {
		t.Run(c.material+" "+c.class, func(t *testing.T) {
			tab, err := SizeTable(c.material, c.class)
			if err != nil {
				t.Fatal(err)
			}
			if tab.Name() != c.want {
				t.Errorf("got %s, want %s", tab.Name(), c.want)
			}
		})
	}
}

func TestSizeTableErrors(t *testing.T) {
	cases := []struct {
		name, material, class string
		msg                   []string // parts of the message
	}{
		{"material without table", "AC", "DR18", []string{`material "AC"`, "PVC, DI, CI"}},
		{"class of another material", "PVC", "PC350", []string{`class "PC350" is not a class of PVC`, "DR14, DR18, DR25"}},
		{"unknown class", "DI", "Class 52", []string{`class "Class 52"`, "PC350, PC300"}},
		{"class of no table", "", "DR21", []string{`class "DR21" is no class`, "PVC DR18", "DI PC350"}},
		{"empty class", "PVC", "", []string{`class ""`}},
		{"bare number without material", "", "52", []string{`class "52"`}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := SizeTable(c.material, c.class)
			if !errors.Is(err, ErrNoSizeTable) {
				t.Fatalf("error %v, want ErrNoSizeTable", err)
			}
			for _, part := range c.msg {
				if !strings.Contains(err.Error(), part) {
					t.Errorf("message %q lacks %q", err, part)
				}
			}
		})
	}
}

func TestSizeTableIsACopy(t *testing.T) {
	a, _ := SizeTable("DI", "PC350")
	a.Sizes[0].Inside = 0
	a.Aliases[0] = "x"
	b, _ := SizeTable("DI", "PC350")
	if b.Sizes[0].Inside == 0 || b.Aliases[0] == "x" {
		t.Error("changing a returned table changed the built-in one")
	}
}

func TestSizeCureWithDuctileIron(t *testing.T) {
	// DOMAIN.md §5.5 / §9 item 12: 1,000 gpm at C 130 and 10 ft/kft needs
	// d_req = 9.05 in; in cement-lined DI PC350 that is the 10-in main
	// (ID 10.455 in, 4.96 ft/kft), and the 8-in (8.425 in) is too small.
	q := 1000 * USGallonPerMinute
	need := RequiredInside(q, 130, 0.010, 5*FootPerSecond)
	tab, err := SizeTable("DI", "PC350")
	if err != nil {
		t.Fatal(err)
	}
	s, ok := SmallestSize(tab.Sizes, need)
	if !ok || math.Abs(s.Nominal.Inches()-10) > 1e-9 {
		t.Fatalf("chosen %g in, want 10 in", s.Nominal.Inches())
	}
	if got := 1000 * FrictionSlope(q, s.Inside, 130); math.Abs(got-4.96) > 0.01 {
		t.Errorf("10-in PC350 loses %.3f ft/kft, want 4.96 ± 0.01", got)
	}
	// A need of 8.2 in: DR18 must go to 10 in (8.044 < 8.2), PC350 stays at 8 in.
	dr18, _ := SizeTable("PVC", "DR18")
	if s, _ := SmallestSize(dr18.Sizes, 8.2*Inch); s.Nominal != 10*Inch {
		t.Errorf("DR18 for 8.2 in: %g in, want 10", s.Nominal.Inches())
	}
	if s, _ := SmallestSize(tab.Sizes, 8.2*Inch); s.Nominal != 8*Inch {
		t.Errorf("PC350 for 8.2 in: %g in, want 8", s.Nominal.Inches())
	}
}
