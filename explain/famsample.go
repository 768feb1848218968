package explain

import (
	"cmp"
	"slices"
)

// famStrata is the number of activation strata of a family sample: equal
// slices of [0, the filter's activation bound), each holding, in each half
// of the corpus, a fixed-size random sample of the winning windows that
// fell in it.
const famStrata = 32

// famCells is the number of cells of a family sample: a stratum in one
// half of the corpus (see half), cell h·famStrata + j holding half h's
// windows of stratum j. Half 0 (the texts that choose the selectivity
// threshold) chooses the families, half 1 measures their shares, so no
// text's window takes part in both.
const famCells = 2 * famStrata

// famSample is a stratified random sample of one filter's fired winning
// windows, drawn apart in each half of the corpus. The threshold that decides which windows the families describe
// is known only when the pass ends, so every stratum keeps its own simple
// random sample: those above the threshold, each weighted by its stratum's
// count over its sample size, estimate every count over all windows above
// it without bias (Horvitz & Thompson 1952, "A Generalization of Sampling
// Without Replacement From a Finite Universe", JASA).
//
// The sample of a cell is the windows with the smallest priorities, a
// hash of the text index and the filter (priority sampling): it is uniform,
// and the workers' samples merge into exactly the sample one pass would
// have drawn, whatever the number of workers.
type famSample struct {
	// bar[c] is the priority a window of cell c must stay under to
	// enter: the largest one held once the cell is full (0 before).
	// It is the part of the sample every window touches, so the bars of
	// all filters of a worker lie side by side in one slice.
	bar []uint64
	// n[c] counts the cell's windows; it is filled when the workers'
	// samples are merged, from the fine histogram.
	n [famCells]int
	// heap holds each cell's sample while sampling: max-heaps by prio, at
	// most cap entries; items holds it once merged.
	heap  [famCells][]famEntry
	items [famCells][]famItem
	// ids holds the sampled windows' ids, width of them in each of the
	// famCells·cap slots, so that sampling allocates nothing.
	ids   []int32
	width int
}

// famEntry is a sampled window while sampling.
type famEntry struct {
	prio uint64
	act  float32
	slot int32 // where its ids are in famSample.ids
}

// famItem is a sampled window once the workers' samples are merged.
type famItem struct {
	prio uint64
	act  float32
	key  string // the window's ids, 4 bytes each
}

// priority is the sampling key of filter g's window in text.
func priority(seed uint64, text, g int) uint64 {
	return mix64(seed ^ (uint64(text)*0x9e3779b97f4a7c15 + uint64(g)*0xbf58476d1ce4e5b9))
}

// mix64 is the finaliser of SplitMix64 (Steele, Lea & Flood 2014, "Fast
// Splittable Pseudorandom Number Generators", OOPSLA).
func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// stratum of a fine-histogram bin.
func stratum(bin int) int { return bin / (fineBins / famStrata) }

// cell of a fine-histogram bin in half hf.
func cell(hf, bin int) int { return hf*famStrata + stratum(bin) }

// wants reports whether a window of priority prio in cell j enters the
// sample (the key is built only then). A priority of 0 always enters a
// full cell, which keeps the sample one of the smallest priorities
// while bar 0 marks a cell not yet full.
func (fs *famSample) wants(j int, prio uint64) bool {
	b := fs.bar[j]
	return b == 0 || prio < b
}

// add samples window ids of cell j with priority prio and activation act
// when wants says so.
func (fs *famSample) add(j int, prio uint64, act float32, ids []int32, capacity int) {
	if !fs.wants(j, prio) {
		return
	}
	if fs.ids == nil {
		fs.width = len(ids)
		fs.ids = make([]int32, famCells*capacity*fs.width)
	}
	h := fs.heap[j]
	it := famEntry{prio: prio, act: act}
	if len(h) < capacity {
		it.slot = int32(j*capacity + len(h))
	} else {
		it.slot = h[0].slot // the evicted window's slot
	}
	copy(fs.ids[int(it.slot)*fs.width:], ids)
	if len(h) < capacity {
		h = append(h, it)
		for i := len(h) - 1; i > 0; {
			p := (i - 1) / 2
			if h[p].prio >= h[i].prio {
				break
			}
			h[p], h[i] = h[i], h[p]
			i = p
		}
	} else {
		h[0] = it
		for i := 0; ; {
			l, r, m := 2*i+1, 2*i+2, i
			if l < len(h) && h[l].prio > h[m].prio {
				m = l
			}
			if r < len(h) && h[r].prio > h[m].prio {
				m = r
			}
			if m == i {
				break
			}
			h[i], h[m] = h[m], h[i]
			i = m
		}
	}
	fs.heap[j] = h
	if len(h) == capacity {
		fs.bar[j] = max(h[0].prio, 1)
	}
}

// mergeSamples merges the workers' samples of one filter; hist is its fine
// histogram ([bin][half][in-class]), which gives each stratum's count.
func mergeSamples(parts []*famSample, hist []int, capacity int) famSample {
	var out famSample
	for bin := 0; bin < fineBins; bin++ {
		for hf := range 2 {
			out.n[cell(hf, bin)] += hist[4*bin+2*hf] + hist[4*bin+2*hf+1]
		}
	}
	for j := range famCells {
		var all []famItem
		for _, p := range parts {
			for _, e := range p.heap[j] {
				s := int(e.slot) * p.width
				all = append(all, famItem{prio: e.prio, act: e.act, key: string(appendKey(nil, p.ids[s:s+p.width]))})
			}
		}
		slices.SortFunc(all, func(a, b famItem) int { return cmp.Compare(a.prio, b.prio) })
		out.items[j] = all[:min(capacity, len(all))]
	}
	return out
}

// sampledWindow is a sampled window above the threshold with its weight.
type sampledWindow struct {
	cell   int
	key    string
	weight float64 // n_c / m_c of its cell
}

// above returns the sampled windows of half hf with activation ≥ theta,
// each weighted by its cell's count over its sample size, and, per cell,
// the sample size m_c (which counts the windows below theta too: the
// sample is drawn before the threshold is known; the other half's cells
// are left at 0).
func (fs *famSample) above(theta float32, hf int) (ws []sampledWindow, m [famCells]int) {
	for j := hf * famStrata; j < (hf+1)*famStrata; j++ {
		m[j] = len(fs.items[j])
		if m[j] == 0 {
			continue
		}
		w := float64(fs.n[j]) / float64(m[j])
		for _, it := range fs.items[j] {
			if it.act >= theta {
				ws = append(ws, sampledWindow{cell: j, key: it.key, weight: w})
			}
		}
	}
	slices.SortFunc(ws, func(a, b sampledWindow) int { return cmp.Compare(a.key, b.key) })
	return ws, m
}
