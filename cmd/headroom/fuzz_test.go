package main

import (
	"bytes"
	"io"
	"strings"
	"testing"

	"headroom/demotown"
)

// configSeed is one seed of FuzzDecodeConfig with what decodeConfig must
// make of it: want "ok" means it decodes, "" that either outcome is
// acceptable, anything else a text the error must contain.
type configSeed struct {
	name, text, want string
}

// fuzzConfigSeeds are the two configs users start from (`headroom init` and
// the demo town's headroom.toml) and broken variants of the kinds a file
// edited by hand or cut off gets.
func fuzzConfigSeeds(tb testing.TB) []configSeed {
	tb.Helper()
	var initText bytes.Buffer
	if err := initCommand(nil, &initText, io.Discard); err != nil {
		tb.Fatalf("headroom init: %v", err)
	}
	town, err := demotown.Generate(demotown.Options{})
	if err != nil {
		tb.Fatalf("demo town: %v", err)
	}
	var demoText bytes.Buffer
	if err := writeConfig(&demoText, demoConfig(town)); err != nil {
		tb.Fatalf("demo config: %v", err)
	}
	in, demo := initText.String(), demoText.String()
	replace := func(old, new string) string {
		if !strings.Contains(in, old) {
			tb.Fatalf("headroom init no longer writes %q; update the seeds", old)
		}
		return strings.Replace(in, old, new, 1)
	}
	return []configSeed{
		{"init", in, "ok"},
		{"demo", demo, "ok"},
		// cut inside a quoted value, wherever the halfway point falls
		{"cut off halfway", in[:strings.LastIndex(in[:len(in)/2], `= "`)+3], "toml: "},
		{"unclosed table header", replace("[pipes]", "[pipes"), "toml: "},
		{"SI units with US spellings", replace(`units = "us"`, `units = "si"`), ""},
		{"unknown units", replace(`units = "us"`, `units = "imperial"`), `units = "imperial"`},
		{"nan peak factor", replace("peak_hour_factor = 2.5", "peak_hour_factor = nan"), "peak_hour_factor is required"},
		{"negative peak factor", replace("peak_hour_factor = 2.5", "peak_hour_factor = -2.5"), "peak_hour_factor is required"},
		{"quoted number", replace("peak_hour_factor = 2.5", `peak_hour_factor = "2.5"`), "incompatible types"},
		{"infinite velocity criterion", replace("max_velocity_fps = 5", "max_velocity_fps = inf"), ""},
		{"zero snap tolerance", replace("snap_tolerance_ft = 0.5", "snap_tolerance_ft = 0"), "must be > 0"},
		{"both spellings", replace("snap_tolerance_ft = 0.5", "snap_tolerance_ft = 0.5\nsnap_tolerance_m = 0.2"), "both network.snap_tolerance_ft and network.snap_tolerance_m"},
		{"duplicate table", in + "\n[pipes]\npath = \"again.geojson\"\n", "already been defined"},
		{"misspelt key", "snap_tolerence_ft = 0.5\n" + in, "unknown key(s) snap_tolerence_ft"},
		{"curve point of three numbers", in + "\n[[aging.curve]]\nmaterial = \"DI\"\nc_by_age = [[0, 140, 3]]\n", "expected array length 2"},
		{"empty curve", in + "\n[[aging.curve]]\nmaterial = \"\"\nc_by_age = []\n", "each curve needs material and c_by_age"},
		{"year out of range", "analysis_year = 99999999999999999999\n", "out of range"},
		{"unknown EPSG code", "units = \"si\"\n[pipes]\ncrs = \"EPSG:999999\"\n", "EPSG:999999"},
		{"byte-order mark", "\xef\xbb\xbf" + in, ""},
		{"not UTF-8", replace(`path = "mains.geojson"`, "path = \"m\xe4ins.geojson\""), ""},
		{"empty", "", "pipes.path is required"},
	}
}

// The seeds are worth fuzzing from only if they are what they say: the two
// shipped configs decode and each broken variant fails for its own reason.
func TestFuzzConfigSeeds(t *testing.T) {
	for _, sd := range fuzzConfigSeeds(t) {
		t.Run(sd.name, func(t *testing.T) {
			cfg, err := decodeConfig(sd.text, "fuzz")
			switch {
			case sd.want == "ok" && err != nil:
				t.Errorf("got error %v, want a config", err)
			case sd.want == "ok" || sd.want == "":
			case err == nil:
				t.Errorf("got config %+v, want an error containing %q", cfg, sd.want)
			case !strings.Contains(err.Error(), sd.want):
				t.Errorf("got error %q, want one containing %q", err, sd.want)
			}
		})
	}
}

// FuzzDecodeConfig: any text gives either a config or an error, never a
// panic or a hang; a config that comes back has the defaults validate fills
// in (units, output formats, interpolation settings). A call that never
// returns is reported by go test itself: the fuzzing engine records the
// input as hung when -fuzztime ends, and a plain run hits -timeout.
func FuzzDecodeConfig(f *testing.F) {
	for _, sd := range fuzzConfigSeeds(f) {
		f.Add(sd.text)
	}
	f.Fuzz(func(t *testing.T, text string) {
		cfg, err := decodeConfig(text, "fuzz")
		switch {
		case err != nil && cfg != nil:
			t.Fatalf("both a config and an error: %v", err)
		case err != nil:
			if !strings.HasPrefix(err.Error(), "fuzz: ") {
				t.Errorf("error does not name the config: %v", err)
			}
		case cfg == nil:
			t.Fatal("neither a config nor an error")
		default:
			c := cfg
			if c.Units != "us" && c.Units != "si" {
				t.Errorf("accepted units %q", c.Units)
			}
			if len(c.Output.Formats) == 0 || c.Elevations.Neighbours == 0 || c.Elevations.Power == 0 || c.Criteria.DesignC == 0 {
				t.Errorf("defaults not filled in: formats %v, neighbours %d, power %g, design C %g",
					c.Output.Formats, c.Elevations.Neighbours, c.Elevations.Power, c.Criteria.DesignC)
			}
			if !(c.Demands.PeakHourFactor > 0) {
				t.Errorf("accepted peak_hour_factor %g", c.Demands.PeakHourFactor)
			}
		}
	})
}
