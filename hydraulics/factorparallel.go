package hydraulics

import (
	"cmp"
	"slices"
	"sync"
)

// Parallel factorisation over the elimination tree (subtree-to-processor
// mapping, as in the multifrontal and supernodal codes of the 1990s; see
// A. George, J. W. H. Liu & E. Ng, "Communication results for parallel
// sparse Cholesky factorization on a hypercube", Parallel Computing 10
// (1989) 287–298, cited from memory): two supernodes whose subtrees are
// disjoint never update each other, so disjoint subtrees can be factorised
// at once, and what is left, the supernodes above them (for nested
// dissection the top separators), afterwards.
//
// The factor is the same to the bit as the serial one. Every supernode is
// formed by the same operations in the same order: within a subtree the
// worker does what the serial loop does; a subtree supernode's move into
// the list of a serial-part supernode is logged rather than made, and the
// serial pass replays the logs in column order, so each list holds its
// updating supernodes in the serial order when its supernode is formed.

// parallelWorkers is the number of workers the plan is made for (the
// machines this runs on have two cores or more).
const parallelWorkers = 2

// minParallelWork is the work estimate (see supernodeWorkEstimate) below
// which a factorisation runs serially: there the start of the workers
// costs more than it saves.
const minParallelWork = 2e6

// parallelBalance is the imbalance of the workers' shares of the subtree
// work at which planParallel stops splitting subtrees.
const parallelBalance = 0.02

// parallelGrain is the work, in multiply-adds, of a dense update of the
// serial part above which it is split between two goroutines.
const parallelGrain = 1 << 17

// maxPlanSplits caps the subtrees planParallel splits.
const maxPlanSplits = 256

// supernodeWorkEstimate returns the work of forming and factorising each
// supernode, Σ_c count(c)² over its columns plus a fixed cost per supernode
// (its list and its scatter), in multiply-adds.
func (m *spd) supernodeWorkEstimate() []float64 {
	sn := m.sn
	ns := len(sn.first) - 1
	work := make([]float64, ns)
	for s := range ns {
		w := 32.0
		for c := sn.first[s]; c < sn.first[s+1]; c++ {
			k := float64(m.lStart[c+1] - m.lStart[c])
			w += k * k
		}
		work[s] = w
	}
	return work
}

// planParallel splits the supernodal elimination tree into subtrees for
// parallelWorkers workers and a serial part above them: starting from the
// roots, it splits the largest subtree into its children (its root joins
// the serial part) until a longest-processing-time assignment of the
// subtrees to the workers is balanced to parallelBalance, or no subtree can
// be split. It leaves the plan empty for small factorisations.
func (m *spd) planParallel() {
	sn := m.sn
	sn.owner, sn.tasks = nil, nil
	ns := len(sn.first) - 1
	if ns < 2 {
		return
	}
	own := m.supernodeWorkEstimate()
	// Supernodal tree: the parent of s is the supernode of the parent of
	// its last column. Postorder numbering puts children before parents
	// and a subtree on the range [s−size+1, s].
	parent := make([]int32, ns)
	work := slices.Clone(own)
	size := make([]int32, ns)
	total := 0.0
	for s := range ns {
		size[s]++
		total += own[s]
		parent[s] = -1
		if p := m.parent[sn.first[s+1]-1]; p >= 0 {
			ps := sn.of[p]
			parent[s] = ps
			work[ps] += work[s]
			size[ps] += size[s]
		}
	}
	if total < minParallelWork {
		return
	}
	childStart := make([]int32, ns+1)
	for _, p := range parent {
		if p >= 0 {
			childStart[p+1]++
		}
	}
	for s := range ns {
		childStart[s+1] += childStart[s]
	}
	children := make([]int32, childStart[ns])
	fill := slices.Clone(childStart[:ns])
	var cands []int32
	for s, p := range parent {
		if p >= 0 {
			children[fill[p]] = int32(s)
			fill[p]++
		} else {
			cands = append(cands, int32(s))
		}
	}
	byWork := func(a, b int32) int {
		if c := cmp.Compare(work[b], work[a]); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	}
	var bins [parallelWorkers][]int32
	for range maxPlanSplits {
		slices.SortFunc(cands, byWork)
		var load [parallelWorkers]float64
		for i := range bins {
			bins[i] = bins[i][:0]
		}
		sum := 0.0
		for _, c := range cands {
			lightest := 0
			for i := range load {
				if load[i] < load[lightest] {
					lightest = i
				}
			}
			load[lightest] += work[c]
			bins[lightest] = append(bins[lightest], c)
			sum += work[c]
		}
		heaviest := slices.Max(load[:])
		if heaviest <= (1+parallelBalance)*sum/parallelWorkers {
			break
		}
		top := cands[0]
		kids := children[childStart[top]:childStart[top+1]]
		if len(kids) == 0 {
			break
		}
		cands = append(cands[1:], kids...)
	}
	if len(bins[1]) == 0 {
		return
	}
	sn.owner = make([]int8, ns)
	for s := range sn.owner {
		sn.owner[s] = -1
	}
	sn.tasks = make([][][2]int32, parallelWorkers)
	for i, bin := range bins {
		for _, root := range bin {
			first := root - size[root] + 1
			for s := first; s <= root; s++ {
				sn.owner[s] = int8(i)
			}
			sn.tasks[i] = append(sn.tasks[i], [2]int32{first, root + 1})
		}
		slices.SortFunc(sn.tasks[i], func(a, b [2]int32) int { return cmp.Compare(a[0], b[0]) })
	}
}

// factorParallel is factor with the parallel plan: the workers factorise
// their subtrees at once, logging the moves into serial-part lists; then
// one pass in column order replays the logs and factorises the serial
// part. An error is the one the serial loop would return: the first
// failing supernode in column order.
func (m *spd) factorParallel() error {
	sn, wk := m.sn, &m.snWork
	wk.clearLists()
	var wg sync.WaitGroup
	for i, ranges := range sn.tasks {
		dw := &wk.dense[i]
		dw.deferring, dw.log, dw.err, dw.helper = true, dw.log[:0], nil, nil
		wg.Go(func() {
			for _, r := range ranges {
				for s := int(r[0]); s < int(r[1]); s++ {
					if err := m.factorSupernode(dw, s); err != nil {
						dw.err, dw.errAt = err, s
						return
					}
				}
			}
		})
	}
	wg.Wait()
	serial := &wk.dense[0]
	serial.deferring, serial.helper = false, &wk.dense[1]
	var cursor [parallelWorkers]int
	for s := 0; s+1 < len(sn.first); s++ {
		o := sn.owner[s]
		if o < 0 {
			if err := m.factorSupernode(serial, s); err != nil {
				return err
			}
			continue
		}
		dw := &wk.dense[o]
		if dw.err != nil && dw.errAt == s {
			return dw.err
		}
		for c := cursor[o]; c < len(dw.log) && int(dw.log[c].time) == s; c++ {
			mv := dw.log[c]
			wk.next[mv.s] = wk.head[mv.target]
			wk.head[mv.target] = mv.s
			cursor[o] = c + 1
		}
	}
	return nil
}
