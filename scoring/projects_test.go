package scoring

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// chain returns n segments end to end (node k to k+1), each length l, on
// one street.
func chain(n int, l float64, street string, qualifies ...bool) []Segment {
	segs := make([]Segment, n)
	for k := range segs {
		segs[k] = Segment{From: k, To: k + 1, Length: l, Street: street, Qualifies: qualifies[k]}
	}
	return segs
}

// TestGroupGapAndTail: along one street Q Q N Q N (100 m each) with a
// 150 m gap allowance, the middle N joins the two runs (a short gap
// between two qualifying segments, DOMAIN.md §7.5, common practice) and
// the trailing N does not.
func TestGroupGapAndTail(t *testing.T) {
	segs := chain(5, 100, "Tansy Lane", true, true, false, true, false)
	groups, err := GroupSegments(segs, GroupOptions{MaxGap: 150, ByStreet: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(groups) != 1 {
		t.Fatalf("%d groups, want 1: %+v", len(groups), groups)
	}
	g := groups[0]
	got := slices.Sorted(slices.Values(g.Segments))
	if !slices.Equal(got, []int{0, 1, 2, 3}) || g.Length != 400 {
		t.Fatalf("group %+v: want segments 0–3, 400 m", g)
	}
	for k, s := range g.Segments {
		if g.Gap[k] != (s == 2) {
			t.Errorf("segment %d: gap %v", s, g.Gap[k])
		}
	}
	// With a 50 m allowance the gap is too long: two projects.
	groups, _ = GroupSegments(segs, GroupOptions{MaxGap: 50, ByStreet: true})
	if len(groups) != 2 {
		t.Fatalf("%d groups with a 50 m gap allowance, want 2: %+v", len(groups), groups)
	}
}

// TestGroupByStreet: two qualifying segments meeting at a node but on
// different streets stay apart with ByStreet and join without it.
func TestGroupByStreet(t *testing.T) {
	segs := []Segment{
		{From: 0, To: 1, Length: 80, Street: "Ostler Row", Qualifies: true},
		{From: 1, To: 2, Length: 90, Street: "Wicken Way", Qualifies: true},
	}
	by, _ := GroupSegments(segs, GroupOptions{ByStreet: true})
	free, _ := GroupSegments(segs, GroupOptions{})
	if len(by) != 2 || len(free) != 1 {
		t.Fatalf("by street %d groups (want 2), without %d (want 1)", len(by), len(free))
	}
}

// TestGroupMaxLength: a 10-segment run of 300 m each under a 1,000 m cap
// gives pieces of three segments (900 m) and a last one of one.
func TestGroupMaxLength(t *testing.T) {
	q := make([]bool, 10)
	for k := range q {
		q[k] = true
	}
	groups, err := GroupSegments(chain(10, 300, "", q...), GroupOptions{MaxLength: 1000})
	if err != nil {
		t.Fatal(err)
	}
	var lengths []float64
	for _, g := range groups {
		lengths = append(lengths, g.Length)
	}
	if !slices.Equal(lengths, []float64{900, 900, 900, 300}) {
		t.Fatalf("piece lengths %v, want [900 900 900 300]", lengths)
	}
	// A segment longer than the cap is a project of its own.
	groups, _ = GroupSegments([]Segment{{From: 0, To: 1, Length: 5000, Qualifies: true}}, GroupOptions{MaxLength: 1000})
	if len(groups) != 1 || groups[0].Length != 5000 {
		t.Fatalf("long segment: %+v", groups)
	}
}

// TestGroupKeepsEverySegment: on random grids with random streets, caps
// and qualifying segments, every qualifying segment is in exactly one
// group, every other segment in a group is a gap, no group passes the cap
// unless it is one segment, and each group is connected through shared
// nodes (issue 7: nothing lost).
func TestGroupKeepsEverySegment(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for trial := range 300 {
		n := 3 + rng.IntN(8)
		var segs []Segment
		node := func(i, j int) int { return j*n + i }
		streets := []string{"A", "B", "C"}
		for j := range n {
			for i := range n {
				if i+1 < n {
					segs = append(segs, Segment{From: node(i, j), To: node(i+1, j), Length: 20 + 200*rng.Float64(),
						Street: streets[j%3], Qualifies: rng.Float64() < 0.4, Skip: rng.Float64() < 0.05})
				}
				if j+1 < n {
					segs = append(segs, Segment{From: node(i, j), To: node(i, j+1), Length: 20 + 200*rng.Float64(),
						Street: streets[(i+1)%3], Qualifies: rng.Float64() < 0.4, Skip: rng.Float64() < 0.05})
				}
			}
		}
		opt := GroupOptions{MaxLength: []float64{0, 300, 800}[trial%3], MaxGap: []float64{0, 150, 400}[trial%3], ByStreet: trial%2 == 0}
		groups, err := GroupSegments(segs, opt)
		if err != nil {
			t.Fatal(err)
		}
		count := make([]int, len(segs))
		for _, g := range groups {
			var sum float64
			for k, s := range g.Segments {
				count[s]++
				sum += segs[s].Length
				if g.Gap[k] == (segs[s].Qualifies && !segs[s].Skip) || segs[s].Skip {
					t.Fatalf("trial %d: segment %d (qualifies %v, skip %v) has gap %v", trial, s, segs[s].Qualifies, segs[s].Skip, g.Gap[k])
				}
			}
			if opt.MaxLength > 0 && len(g.Segments) > 1 && g.Length > opt.MaxLength+1e-9 {
				t.Fatalf("trial %d: group of %.0f m passes the %.0f m cap", trial, g.Length, opt.MaxLength)
			}
			if d := sum - g.Length; d > 1e-9 || d < -1e-9 {
				t.Fatalf("trial %d: group length %.3f, its segments sum to %.3f", trial, g.Length, sum)
			}
			if !connected(segs, g.Segments, opt.ByStreet) {
				t.Fatalf("trial %d: group %v is not connected", trial, g.Segments)
			}
		}
		for s, c := range count {
			q := segs[s].Qualifies && !segs[s].Skip
			if (q && c != 1) || c > 1 {
				t.Fatalf("trial %d: segment %d (qualifies %v) is in %d groups", trial, s, q, c)
			}
		}
	}
}

// connected reports whether members form one piece through shared nodes
// (and streets, with byStreet), by a search written apart from the code
// under test.
func connected(segs []Segment, members []int, byStreet bool) bool {
	seen := map[int]bool{members[0]: true}
	stack := []int{members[0]}
	for len(stack) > 0 {
		a := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		for _, b := range members {
			if seen[b] || (byStreet && segs[a].Street != segs[b].Street) {
				continue
			}
			sa, sb := segs[a], segs[b]
			if sa.From == sb.From || sa.From == sb.To || sa.To == sb.From || sa.To == sb.To {
				seen[b] = true
				stack = append(stack, b)
			}
		}
	}
	return len(seen) == len(members)
}
