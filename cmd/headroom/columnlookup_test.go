package main

import (
	"fmt"
	"testing"
)

// columnLookup finds each column where a scan of the names does, and no
// other name: for the pipe layer's columns in both unit systems (every
// name gets a slot of its own, so no map is needed), for names that differ
// from them in one byte, and for a set of names too alike to separate,
// which falls back to a map and still answers the same.
func TestColumnLookupAsScan(t *testing.T) {
	scan := func(names []string, name string) (int, bool) {
		for k, n := range names {
			if n == name {
				return k, true
			}
		}
		return 0, false
	}
	check := func(t *testing.T, names []string, ci *columnLookup) {
		t.Helper()
		probes := append([]string{"", "x", "pipe_id_", "Pipe_id"}, names...)
		for _, n := range names {
			if n != "" {
				probes = append(probes, n[:len(n)-1]+"?", "?"+n[1:], n+n)
			}
		}
		for _, p := range probes {
			gk, gok := ci.position(p)
			wk, wok := scan(names, p)
			if gk != wk || gok != wok {
				t.Fatalf("%q: position %d, %v; a scan finds %d, %v", p, gk, gok, wk, wok)
			}
		}
	}
	r := demoResult(t)
	for _, sys := range []string{"us", "si"} {
		t.Run(sys, func(t *testing.T) {
			c, cfg := *r, *r.cfg
			cfg.Units = sys
			c.cfg = &cfg
			var names []string
			for _, col := range c.pipeColumns() {
				names = append(names, col.Name)
			}
			if len(names) < 30 {
				t.Fatalf("only %d pipe columns", len(names))
			}
			ci := newColumnLookup(names)
			if ci.fallback != nil {
				t.Errorf("the %d pipe columns need the map fallback", len(names))
			}
			check(t, names, ci)
		})
	}
	t.Run("alike", func(t *testing.T) {
		// Same length and first, middle and last bytes: one hash for all.
		var names []string
		for k := range 40 {
			names = append(names, fmt.Sprintf("a%02dm%02dz", k, 39-k))
		}
		ci := newColumnLookup(names)
		if ci.fallback == nil {
			t.Error("40 names of one hash got slots of their own")
		}
		check(t, names, ci)
	})
}
