package explain

import (
	"cmp"
	"maps"
	"math"
	"slices"

	"telltale/cnn"
)

// GroupRule states how flagged words form cue groups and how filters join
// them. The thresholds are a plain rule of this tool (common practice, no
// source): an artifact such as a footer line puts several words into the
// same texts, so their document sets nearly coincide.
const GroupRule = "flagged words of the same dominant label whose training texts overlap with a Jaccard index " +
	"|A∩B|/|A∪B| ≥ 0.8 form one cue group (single linkage: overlaps chain); a flagged word is shared, and is " +
	"nobody's cue, when ≥ 80% of its training texts hold a smaller group of other words that occurs with it " +
	"in ≥ 80% of that group's texts (a '-' that belongs to two artifacts); a filter joins the group whose " +
	"words carry the most of its above-threshold slot mass among groups voting its class (else any group), " +
	"if that group carries ≥ cue_share of its mass or one of its words is in ≥ 30% of its windows"

// GroupFormula states how CueGroup.Score is made.
const GroupFormula = "group score = flagged_share × max(0, harm) with all the group's filters masked together: " +
	"flagged_share = Σ flagged slot mass / Σ slot mass over its filters (training split); harm = conflict_share × " +
	"conflict_gain over the held-out texts holding any of its words, where conflict_gain is the mean rise of the " +
	"gold label's probability on those whose gold label is not the group's"

// keyWindowShare is the least share of a filter's above-threshold windows
// holding one of a group's words for the filter to join the group on window
// share alone.
const keyWindowShare = 0.3

// sharedShare is the coverage of the shared-word test (GroupRule).
const sharedShare = 0.8

// CueGroup is a set of flagged words that behave as one artifact, the
// filters keyed on them, and what masking all those filters together does.
type CueGroup struct {
	// Words are the group's flagged words, largest z first.
	Words []string `json:"words"`
	IDs   []int32  `json:"ids"`
	Label string   `json:"label"` // their dominant label
	Class int      `json:"class"`
	// TrainTexts is the number of training texts holding one of the words,
	// LabelShare the share of them whose gold label is Label;
	// HeldoutTexts the number of held-out texts holding one.
	TrainTexts   int     `json:"train_texts"`
	LabelShare   float64 `json:"label_share"`
	HeldoutTexts int     `json:"heldout_texts"`
	// Shared are flagged words that come with this group (GroupRule) and
	// are counted as nobody's cue.
	Shared []string `json:"shared_words,omitempty"`
	// Filters are its member filters, highest Suspect score first.
	Filters []int      `json:"filters"`
	Score   float64    `json:"score"`
	Parts   GroupParts `json:"parts"`
	// Ablation and Conflict are the held-out split with all Filters masked
	// together (exactly: Σ_g OutW[c][g]·h[g] taken off each logit).
	Ablation Ablation `json:"ablation"`
	Conflict Conflict `json:"conflict"`
	// Mask is the prefix of Filters (strongest first) whose joint masking
	// gives the best held-out accuracy (the shortest on ties); MaskAblation
	// and MaskConflict are its interventions. It is chosen on the held-out
	// split, so its figures there are optimistic: confirm them on another
	// split. MaskP is the one-sided exact McNemar p-value of its fixed
	// against its broken held-out predictions.
	Mask         []int    `json:"mask"`
	MaskAblation Ablation `json:"mask_ablation"`
	MaskConflict Conflict `json:"mask_conflict"`
	MaskP        float64  `json:"mask_p"`
	// Counter substitutes all the group's words by label-neutral words
	// (the unmasked model); nil when not computed.
	Counter  *Counterfactual `json:"counterfactual"`
	Examples []AuditExample  `json:"examples"` // cue-conflicting texts the joint masking changes
}

// GroupParts are the numbers a group's score is made of (GroupFormula).
type GroupParts struct {
	FlaggedShare float64 `json:"flagged_share"`
	FlaggedMass  float64 `json:"flagged_mass"`
	Mass         float64 `json:"mass"`
	// Push is the mean over the PushTexts held-out texts holding a word of
	// the group of p(label) − p(label | group masked).
	Push          float64 `json:"push"`
	PushTexts     int     `json:"push_texts"`
	ConflictShare float64 `json:"conflict_share"`
	ConflictGain  float64 `json:"conflict_gain"`
	Harm          float64 `json:"harm"`
}

// MaskPlan is the suggested set of filters to mask: the Mask of each cue
// group among the first five with a positive score whose Mask raises
// held-out accuracy with MaskP < 0.05 and raises accuracy on its
// cue-conflicting texts, and the held-out split with all of them masked
// together.
type MaskPlan struct {
	Groups   []int    `json:"groups"` // 1-based positions in Audit.CueGroups
	Filters  []int    `json:"filters"`
	Ablation Ablation `json:"ablation"`
}

// mergeCues groups words by the overlap of their document sets: words i
// and j of the same class with Jaccard |D_i ∩ D_j| / |D_i ∪ D_j| ≥ minJ
// are linked, and the result is the connected components (single
// linkage). Docs[i] must be sorted and free of repeats. It returns the
// component of each word, numbered by the smallest index in it.
func mergeCues(class []int, docs [][]int32, minJ float64) []int {
	n := len(docs)
	parent := make([]int, n)
	for i := range parent {
		parent[i] = i
	}
	var find func(int) int
	find = func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	order := make([]int, n)
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(x, y int) int { return cmp.Compare(len(docs[x]), len(docs[y])) })
	for a, i := range order {
		ni := len(docs[i])
		if ni == 0 {
			continue
		}
		for _, j := range order[a+1:] {
			nj := len(docs[j])
			// J ≤ ni/nj for ni ≤ nj: no later word can reach minJ.
			if float64(ni) < minJ*float64(nj) {
				break
			}
			if class[i] != class[j] || find(i) == find(j) {
				continue
			}
			inter := intersectCount(docs[i], docs[j])
			if float64(inter) >= minJ*float64(ni+nj-inter) {
				parent[find(j)] = find(i)
			}
		}
	}
	comp := make([]int, n)
	low := map[int]int{}
	for i := range comp {
		r := find(i)
		if _, ok := low[r]; !ok {
			low[r] = i
		}
		comp[i] = low[r]
	}
	return comp
}

// intersectCount is |a ∩ b| of two sorted lists.
func intersectCount(a, b []int32) int {
	n, i, j := 0, 0, 0
	for i < len(a) && j < len(b) {
		switch {
		case a[i] < b[j]:
			i++
		case a[i] > b[j]:
			j++
		default:
			n++
			i++
			j++
		}
	}
	return n
}

// unionSorted merges sorted lists without repeats.
func unionSorted(lists ...[]int32) []int32 {
	var out []int32
	for _, l := range lists {
		out = append(out, l...)
	}
	slices.Sort(out)
	return slices.Compact(out)
}

// sharedWords returns, for each word w (docs[w] sorted), the groups that
// make it shared: groups G other than w's own with |D_G| < |D_w| and
// |D_G ∩ D_w| ≥ minShare·|D_G|, when together they cover ≥ minShare of D_w;
// nil when w is not shared. groupDocs[G] are the groups' sorted texts,
// own[w] the group of w; nText bounds the text indices.
func sharedWords(docs [][]int32, own []int, groupDocs [][]int32, minShare float64, nText int) [][]int {
	out := make([][]int, len(docs))
	mark := make([]int32, nText)
	cover := make([]int32, nText)
	for w, dw := range docs {
		stamp := int32(w + 1)
		for _, d := range dw {
			mark[d] = stamp
		}
		var with []int
		covered := 0
		for G, dg := range groupDocs {
			if G == own[w] || len(dg) == 0 || len(dg) >= len(dw) {
				continue
			}
			miss, allow := 0, int(float64(len(dg))*(1-minShare))
			for _, d := range dg {
				if mark[d] != stamp {
					if miss++; miss > allow {
						break
					}
				}
			}
			if miss > allow {
				continue
			}
			with = append(with, G)
			for _, d := range dg {
				if mark[d] == stamp && cover[d] != stamp {
					cover[d] = stamp
					covered++
				}
			}
		}
		if len(with) > 0 && float64(covered) >= minShare*float64(len(dw)) {
			out[w] = with
		}
	}
	return out
}

// wordGroups is the grouping of the flagged words.
type wordGroups struct {
	of     map[int32]int // flagged word → group
	ids    [][]int32     // group → words, largest z first
	class  []int
	docs   [][]int32 // group → sorted training texts holding one of its words
	shared map[int32][]int
}

// groupWords builds the cue groups of the flagged words (GroupRule). The
// shared test runs only for the words relevant to some filter (relevant
// reports them) against the groups of such words.
func (a *auditor) groupWords(relevant map[int32]bool) *wordGroups {
	var ids []int32
	for _, s := range a.assoc.Stats {
		if s.Flagged {
			ids = append(ids, s.ID)
		}
	}
	pos := make(map[int32]int, len(ids))
	for k, id := range ids {
		pos[id] = k
	}
	docs := make([][]int32, len(ids))
	for t, text := range a.train.IDs {
		for _, id := range text {
			if k, ok := pos[id]; ok && (len(docs[k]) == 0 || docs[k][len(docs[k])-1] != int32(t)) {
				docs[k] = append(docs[k], int32(t))
			}
		}
	}
	class := make([]int, len(ids))
	for k, id := range ids {
		class[k] = a.assoc.Stat(id).Class
	}
	comp := mergeCues(class, docs, a.opt.GroupJaccard)
	wg := &wordGroups{of: map[int32]int{}, shared: map[int32][]int{}}
	index := map[int]int{}
	for k, c := range comp {
		G, ok := index[c]
		if !ok {
			G = len(wg.ids)
			index[c] = G
			wg.ids = append(wg.ids, nil)
			wg.class = append(wg.class, class[k])
		}
		wg.of[ids[k]] = G
		wg.ids[G] = append(wg.ids[G], ids[k])
	}
	wg.docs = make([][]int32, len(wg.ids))
	for G, ws := range wg.ids {
		var ls [][]int32
		for _, id := range ws {
			ls = append(ls, docs[pos[id]])
		}
		wg.docs[G] = unionSorted(ls...)
		slices.SortStableFunc(ws, func(x, y int32) int {
			if zx, zy := a.assoc.Stat(x).Z, a.assoc.Stat(y).Z; zx != zy {
				return cmp.Compare(zy, zx)
			}
			return cmp.Compare(x, y)
		})
	}
	// The shared test: relevant words against the groups of relevant words.
	var rel []int32
	for id := range relevant {
		if _, ok := wg.of[id]; ok {
			rel = append(rel, id)
		}
	}
	slices.Sort(rel)
	relGroups := make([][]int32, len(wg.ids))
	for _, id := range rel {
		relGroups[wg.of[id]] = wg.docs[wg.of[id]]
	}
	rdocs := make([][]int32, len(rel))
	own := make([]int, len(rel))
	for k, id := range rel {
		rdocs[k], own[k] = docs[pos[id]], wg.of[id]
	}
	for k, with := range sharedWords(rdocs, own, relGroups, sharedShare, a.train.Len()) {
		if with != nil {
			wg.shared[rel[k]] = with
		}
	}
	return wg
}

// relevantWords are the flagged words that carry at least 2% of some
// candidate filter's above-threshold slot mass or lie in at least 5% of
// its windows.
func (a *auditor) relevantWords(cands []int) map[int32]bool {
	rel := map[int32]bool{}
	for _, g := range cands {
		e := &a.ev[g]
		for id, v := range e.cueMass {
			if v >= 0.02*e.mass {
				rel[id] = true
			}
		}
		for id, n := range e.cueWins {
			if float64(n) >= 0.05*float64(e.above) {
				rel[id] = true
			}
		}
	}
	return rel
}

// assign picks the group of filter g (GroupRule), or −1.
func (a *auditor) assign(g int, wg *wordGroups) int {
	e := &a.ev[g]
	vote := a.prof.Filters[g].Class
	ids := make([]int32, 0, len(e.cueMass))
	for id := range e.cueMass {
		ids = append(ids, id)
	}
	slices.Sort(ids)
	pick := func(withShared bool) int {
		mass := map[int]float64{}
		win := map[int]float64{}
		for _, id := range ids {
			if _, sh := wg.shared[id]; sh && !withShared {
				continue
			}
			G := wg.of[id]
			mass[G] += e.cueMass[id]
			win[G] = max(win[G], float64(e.cueWins[id])/float64(max(1, e.above)))
		}
		best, bestVote := -1, -1
		for _, G := range slices.Sorted(maps.Keys(mass)) {
			if mass[G] < a.opt.CueShare*e.mass && win[G] < keyWindowShare {
				continue
			}
			if best < 0 || mass[G] > mass[best] {
				best = G
			}
			if wg.class[G] == vote && (bestVote < 0 || mass[G] > mass[bestVote]) {
				bestVote = G
			}
		}
		if bestVote >= 0 {
			return bestVote
		}
		return best
	}
	if G := pick(false); G >= 0 {
		return G
	}
	return pick(true)
}

// cueGroups forms the cue groups of the scored suspects (sorted by their
// own score), measures each group's joint intervention and returns the
// groups with members, highest score first, and each suspect's group
// (index into the result, or −1).
func (a *auditor) cueGroups(sus []Suspect, base cnn.Metrics) ([]CueGroup, []int) {
	cands := make([]int, len(sus))
	for i, s := range sus {
		cands[i] = s.Filter
	}
	wg := a.groupWords(a.relevantWords(cands))
	member := make([]int, len(sus))
	members := map[int][]int{} // word group → suspect indices
	for i, s := range sus {
		member[i] = a.assign(s.Filter, wg)
		if member[i] >= 0 {
			members[member[i]] = append(members[member[i]], i)
		}
	}
	labels := labelNames(a.m)
	keys := slices.Sorted(maps.Keys(members))
	groups := make([]CueGroup, len(keys))
	audParallel(len(keys), a.opt.Workers, func(k int) {
		G := keys[k]
		cg := CueGroup{IDs: slices.Clone(wg.ids[G]), Class: wg.class[G], Label: labels[wg.class[G]]}
		for _, id := range cg.IDs {
			cg.Words = append(cg.Words, wordOf(a.m, id))
		}
		cg.TrainTexts = len(wg.docs[G])
		same := 0
		for _, t := range wg.docs[G] {
			if a.train.Gold[t] == cg.Class {
				same++
			}
		}
		if cg.TrainTexts > 0 {
			cg.LabelShare = float64(same) / float64(cg.TrainTexts)
		}
		cg.HeldoutTexts = len(a.cueTexts(cg.IDs))
		var sh []int32
		for id, with := range wg.shared {
			if slices.Contains(with, G) {
				sh = append(sh, id)
			}
		}
		slices.Sort(sh)
		for _, id := range sh {
			cg.Shared = append(cg.Shared, wordOf(a.m, id))
		}
		for _, i := range members[G] {
			g := sus[i].Filter
			cg.Filters = append(cg.Filters, g)
			cg.Parts.FlaggedMass += a.ev[g].flagMass
			cg.Parts.Mass += a.ev[g].mass
		}
		if cg.Parts.Mass > 0 {
			cg.Parts.FlaggedShare = cg.Parts.FlaggedMass / cg.Parts.Mass
		}
		iv := a.intervene(cg.Filters, cg.IDs, cg.Class, base, "masking the group's filters")
		cg.Ablation, cg.Conflict, cg.Examples = iv.ablation, iv.conflict, iv.examples
		cg.Parts.Push, cg.Parts.PushTexts = iv.push, iv.pushTexts
		cg.Parts.ConflictShare, cg.Parts.ConflictGain, cg.Parts.Harm = iv.conflictShare, iv.conflictGain, iv.harm
		cg.Score = cg.Parts.FlaggedShare * max(0, cg.Parts.Harm)
		cg.Mask = cg.Filters[:a.bestPrefix(cg.Filters)]
		iv = a.intervene(cg.Mask, cg.IDs, cg.Class, base, "masking its strongest filters")
		cg.MaskAblation, cg.MaskConflict = iv.ablation, iv.conflict
		cg.MaskP = McNemarExact(iv.ablation.Fixed, iv.ablation.Broken)
		groups[k] = cg
	})
	order := make([]int, len(groups))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(x, y int) int {
		gx, gy := &groups[x], &groups[y]
		if gx.Score != gy.Score {
			return cmp.Compare(gy.Score, gx.Score)
		}
		if tx, ty := gx.Parts.FlaggedShare*gx.Parts.Push, gy.Parts.FlaggedShare*gy.Parts.Push; tx != ty {
			return cmp.Compare(ty, tx)
		}
		return cmp.Compare(gx.Filters[0], gy.Filters[0])
	})
	rank := make([]int, len(groups))
	out := make([]CueGroup, len(groups))
	for r, k := range order {
		out[r] = groups[k]
		rank[k] = r
	}
	at := map[int]int{}
	for k, G := range keys {
		at[G] = rank[k]
	}
	of := make([]int, len(sus))
	for i := range sus {
		of[i] = -1
		if member[i] >= 0 {
			of[i] = at[member[i]]
		}
	}
	return out, of
}

// roundRobin orders the suspects (sorted by their own score; group[i] is
// the group of sus[i], groups sorted by score): the strongest filter of
// each group with a positive score, groups in order, then the second of
// each, and so on; then every other suspect in its own order.
func roundRobin(sus []Suspect, group []int, groups []CueGroup) ([]Suspect, []int) {
	byGroup := make([][]int, len(groups))
	var rest []int
	for i := range sus {
		if G := group[i]; G >= 0 && groups[G].Score > 0 {
			byGroup[G] = append(byGroup[G], i)
		} else {
			rest = append(rest, i)
		}
	}
	var order []int
	for r := 0; ; r++ {
		added := false
		for _, ms := range byGroup {
			if r < len(ms) {
				order = append(order, ms[r])
				added = true
			}
		}
		if !added {
			break
		}
	}
	order = append(order, rest...)
	out := make([]Suspect, len(sus))
	og := make([]int, len(sus))
	for k, i := range order {
		out[k], og[k] = sus[i], group[i]
	}
	return out, og
}

// groupCounterfactuals is how many of the first cue groups get a
// counterfactual substitution of their words.
const groupCounterfactuals = 10

// planGroups is how many of the first cue groups the suggested mask draws
// on.
const planGroups = 5

// plan suggests the masks of the groups among the first planGroups that
// pass MaskPlan's tests, and measures all of them masked together; nil
// when there are none.
func (a *auditor) plan(groups []CueGroup, base cnn.Metrics) *MaskPlan {
	p := &MaskPlan{}
	for G := range groups[:min(len(groups), planGroups)] {
		cg := &groups[G]
		if cg.Score > 0 && cg.MaskAblation.DeltaAccuracy > 0 && cg.MaskP < 0.05 && cg.MaskConflict.AccuracyMasked > cg.MaskConflict.Accuracy {
			p.Groups = append(p.Groups, G+1)
			p.Filters = append(p.Filters, cg.Mask...)
		}
	}
	if len(p.Filters) == 0 {
		return nil
	}
	slices.Sort(p.Filters)
	p.Filters = slices.Compact(p.Filters)
	p.Ablation = a.intervene(p.Filters, nil, 0, base, "").ablation
	return p
}

// bestPrefix returns k ≥ 1 such that masking gs[:k] together gives the
// best held-out accuracy, the smallest such k (gs not empty).
func (a *auditor) bestPrefix(gs []int) int {
	n, C, nf := a.held.Len(), a.C, a.nf
	z := slices.Clone(a.logits)
	best, bestK := -1, 1
	for k, g := range gs {
		right := 0
		for i := 0; i < n; i++ {
			zi := z[i*C : (i+1)*C]
			h := float64(a.pooled[i*nf+g])
			for c := range zi {
				zi[c] -= float64(a.m.OutW[c*nf+g]) * h
			}
			if audArgmax(zi) == a.held.Gold[i] {
				right++
			}
		}
		if right > best {
			best, bestK = right, k+1
		}
	}
	return bestK
}

// McNemarExact is the one-sided exact McNemar test (McNemar 1947, "Note on
// the sampling error of the difference between correlated proportions or
// percentages", Psychometrika 12:153–157, in its exact binomial form):
// with b pairs that one classifier gets right and the other wrong and c
// the other way round, the p-value of b or more under Binomial(b+c, ½),
// P(X ≥ b). It is 1 when b + c = 0.
func McNemarExact(b, c int) float64 {
	n := b + c
	if n == 0 || b <= 0 {
		return 1
	}
	lf := func(k int) float64 { v, _ := math.Lgamma(float64(k) + 1); return v }
	var p float64
	for k := b; k <= n; k++ {
		p += math.Exp(lf(n) - lf(k) - lf(n-k) - float64(n)*math.Ln2)
	}
	return min(1, p)
}
