package factored

import "slices"

// flatMax is the longest neighbour list kept as one flat slice; a longer
// one is split into blocks of at most blockMax, so that adding a customer
// to a merchant with a million of them moves a block, not megabytes.
const (
	flatMax  = 4096
	blockMax = 2048
)

// adjacency is one node's neighbours in increasing id order with the
// triangle count of each edge beside it: tri[i] = |N(x) ∩ N(nbr[i])|.
// Short lists are the flat pair nbr, tri; long ones live in blk.
type adjacency struct {
	nbr, tri []uint32
	blk      *blocks
}

// blocks is a long neighbour list cut into sorted runs; first[i] is the
// smallest id of run i and every id of run i is below first[i+1].
type blocks struct {
	first    []uint32
	nbr, tri [][]uint32
	n        int
}

// size returns the number of neighbours.
func (a *adjacency) size() int {
	if a.blk != nil {
		return a.blk.n
	}
	return len(a.nbr)
}

// block returns the run that holds (or would hold) y.
func (b *blocks) block(y uint32) int {
	i, _ := slices.BinarySearch(b.first, y)
	if i == len(b.first) || b.first[i] != y {
		i--
	}
	return max(i, 0)
}

// find returns a pointer to tri(x, y) when y is a neighbour, else nil.
func (a *adjacency) find(y uint32) *uint32 {
	if a.blk == nil {
		if i, ok := slices.BinarySearch(a.nbr, y); ok {
			return &a.tri[i]
		}
		return nil
	}
	b := a.blk.block(y)
	if i, ok := slices.BinarySearch(a.blk.nbr[b], y); ok {
		return &a.blk.tri[b][i]
	}
	return nil
}

// has reports whether y is a neighbour.
func (a *adjacency) has(y uint32) bool { return a.find(y) != nil }

// insert adds y (absent) with edge triangle count t.
func (a *adjacency) insert(y, t uint32) {
	if a.blk == nil {
		i, _ := slices.BinarySearch(a.nbr, y)
		a.nbr = slices.Insert(a.nbr, i, y)
		a.tri = slices.Insert(a.tri, i, t)
		if len(a.nbr) > flatMax {
			a.split()
		}
		return
	}
	b := a.blk
	k := b.block(y)
	i, _ := slices.BinarySearch(b.nbr[k], y)
	b.nbr[k] = slices.Insert(b.nbr[k], i, y)
	b.tri[k] = slices.Insert(b.tri[k], i, t)
	b.first[k] = b.nbr[k][0]
	b.n++
	if len(b.nbr[k]) > blockMax {
		h := len(b.nbr[k]) / 2
		nb, tb := slices.Clone(b.nbr[k][h:]), slices.Clone(b.tri[k][h:])
		b.nbr[k], b.tri[k] = b.nbr[k][:h:h], b.tri[k][:h:h]
		b.nbr = slices.Insert(b.nbr, k+1, nb)
		b.tri = slices.Insert(b.tri, k+1, tb)
		b.first = slices.Insert(b.first, k+1, nb[0])
	}
}

// split turns a flat list that outgrew flatMax into runs of blockMax/2.
func (a *adjacency) split() {
	b := &blocks{n: len(a.nbr)}
	for i := 0; i < len(a.nbr); i += blockMax / 2 {
		j := min(i+blockMax/2, len(a.nbr))
		b.first = append(b.first, a.nbr[i])
		b.nbr = append(b.nbr, slices.Clone(a.nbr[i:j]))
		b.tri = append(b.tri, slices.Clone(a.tri[i:j]))
	}
	a.nbr, a.tri, a.blk = nil, nil, b
}

// remove deletes y, which must be present.
func (a *adjacency) remove(y uint32) {
	if a.blk == nil {
		i, _ := slices.BinarySearch(a.nbr, y)
		a.nbr = slices.Delete(a.nbr, i, i+1)
		a.tri = slices.Delete(a.tri, i, i+1)
		return
	}
	b := a.blk
	k := b.block(y)
	i, _ := slices.BinarySearch(b.nbr[k], y)
	b.nbr[k] = slices.Delete(b.nbr[k], i, i+1)
	b.tri[k] = slices.Delete(b.tri[k], i, i+1)
	b.n--
	switch {
	case len(b.nbr[k]) == 0:
		b.nbr = slices.Delete(b.nbr, k, k+1)
		b.tri = slices.Delete(b.tri, k, k+1)
		b.first = slices.Delete(b.first, k, k+1)
	default:
		b.first[k] = b.nbr[k][0]
	}
	if b.n <= flatMax/2 {
		a.nbr, a.tri = make([]uint32, 0, b.n), make([]uint32, 0, b.n)
		for k := range b.nbr {
			a.nbr = append(a.nbr, b.nbr[k]...)
			a.tri = append(a.tri, b.tri[k]...)
		}
		a.blk = nil
	}
}

// runs walks a neighbour list run by run (one flat run, or the blocks)
// without allocating:
//
//	for r := a.runs(); r.next(); {
//		for i, y := range r.nbr { … r.tri[i] … }
//	}
type runs struct {
	a        *adjacency
	k        int
	nbr, tri []uint32
}

func (a *adjacency) runs() runs { return runs{a: a, k: -1} }

func (r *runs) next() bool {
	r.k++
	if r.a.blk == nil {
		r.nbr, r.tri = r.a.nbr, r.a.tri
		return r.k == 0
	}
	if r.k >= len(r.a.blk.nbr) {
		return false
	}
	r.nbr, r.tri = r.a.blk.nbr[r.k], r.a.blk.tri[r.k]
	return true
}
