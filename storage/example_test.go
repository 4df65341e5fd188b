package storage_test

import (
	"fmt"
	"os"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// A fictional pair of payments among three accounts, committed as one
// checkpoint and read back as of that checkpoint. The vectors are set by
// hand here (package delta computes real ones): in the 3-path
// till → shop → bank the ends are orbit 1 and the middle orbit 2 (Pržulj
// 2007 numbering), and every node has degree-many orbit-0 positions.
func Example() {
	dir, err := os.MkdirTemp("", "orbitwatch-example")
	if err != nil {
		panic(err)
	}
	defer os.RemoveAll(dir)
	st, err := storage.Open(dir, storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: 15})
	if err != nil {
		panic(err)
	}
	defer st.Close()
	s, err := st.Load() // empty: start from the beginning of the log
	if err != nil {
		panic(err)
	}
	till, _ := s.Dict.Intern("till-0001")
	shop, _ := s.Dict.Intern("shop-0042")
	bank, _ := s.Dict.Intern("bank-0007")
	s.Vectors.Grow(s.Dict.Len())
	for _, e := range [][2]uint32{{till, shop}, {shop, bank}} {
		if _, err := s.Graph.Increment(e[0], e[1]); err != nil {
			panic(err)
		}
	}
	s.Vectors.Set(till, 0, 1)
	s.Vectors.Set(till, 1, 1)
	s.Vectors.Set(shop, 0, 2)
	s.Vectors.Set(shop, 2, 1)
	s.Vectors.Set(bank, 0, 1)
	s.Vectors.Set(bank, 1, 1)
	err = st.Commit(&storage.Checkpoint{
		Seq:       2,
		Watermark: time.Date(2031, 3, 1, 12, 0, 0, 0, time.UTC),
		Dict:      s.Dict,
		Graph:     s.Graph,
		Edges:     [][2]uint32{{till, shop}, {shop, bank}},
		Vectors:   s.Vectors,
		Nodes:     []uint32{till, shop, bank},
		Blobs:     map[string][]byte{"progress": []byte("payments.csv line 2")},
	})
	if err != nil {
		panic(err)
	}
	vec, cut, wm, err := st.VectorAt("shop-0042", 10)
	if err != nil {
		panic(err)
	}
	fmt.Println(cut, wm.Format(time.DateOnly), vec[:4])
	seq, ok := st.SeqAtTime(time.Date(2031, 3, 2, 0, 0, 0, 0, time.UTC))
	fmt.Println(seq, ok)
	// Output:
	// 2 2031-03-01 [2 0 1 0]
	// 2 true
}
