package main

// columnLookup finds an output column's position by its name for
// rowValues.set, which the table stage calls about fifty times a pipe (at a
// million pipes, a Go map's hashing and probing took 1 s of the stage's
// 3.4 s of CPU). It is a perfect hash over the columns' names: each name
// has a slot of its own, found from its length and three of its bytes, and
// a lookup compares the one name in the slot. Where no seed separates the
// names within a table of 16 slots a name, it falls back to a map.
type columnLookup struct {
	names    []string
	slots    []int32 // 1 + the column in each slot; 0 for none
	mask     uint32
	seed     uint32
	fallback map[string]int
}

// columnSeeds is how many seeds newColumnLookup tries at each table size.
const columnSeeds = 64

// newColumnLookup indexes names; the first of a repeated name wins, as the
// map it replaces was filled last-wins: a repeated name is refused by the
// layer writers long before a row is set, so either serves.
func newColumnLookup(names []string) *columnLookup {
	ci := &columnLookup{names: names}
	n := uint32(max(len(names), 1))
	for size := uint32(4); size <= 16*n; size *= 2 {
		if size < 4*n {
			continue
		}
		for seed := uint32(1); seed <= columnSeeds; seed++ {
			if ci.try(size, seed) {
				return ci
			}
		}
	}
	ci.slots = nil
	ci.fallback = make(map[string]int, len(names))
	for k := len(names) - 1; k >= 0; k-- {
		ci.fallback[names[k]] = k
	}
	return ci
}

// try fills a table of size slots (a power of two) with seed and reports
// whether every name got a slot of its own.
func (ci *columnLookup) try(size, seed uint32) bool {
	slots := make([]int32, size)
	for k, n := range ci.names {
		h := columnHash(n, seed) & (size - 1)
		if slots[h] != 0 {
			if ci.names[slots[h]-1] == n {
				continue // a repeated name keeps its first column
			}
			return false
		}
		slots[h] = int32(k + 1)
	}
	ci.slots, ci.mask, ci.seed = slots, size-1, seed
	return true
}

// columnHash mixes a name's length and its first, middle and last bytes.
func columnHash(s string, seed uint32) uint32 {
	if s == "" {
		return seed
	}
	h := uint32(len(s))*0x9e3779b1 ^ seed*0x85ebca6b
	h ^= uint32(s[0]) | uint32(s[len(s)/2])<<8 | uint32(s[len(s)-1])<<16
	h *= 0xc2b2ae35
	return h ^ h>>15
}

// position is the column named name, or false.
func (ci *columnLookup) position(name string) (int, bool) {
	if ci.fallback != nil {
		k, ok := ci.fallback[name]
		return k, ok
	}
	k := ci.slots[columnHash(name, ci.seed)&ci.mask] - 1
	if k < 0 || ci.names[k] != name {
		return 0, false
	}
	return int(k), true
}
