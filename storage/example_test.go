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
	// The records are the counter's (package delta); here, the degree.
	err = st.Commit(&storage.Checkpoint{
		Seq:       2,
		Watermark: time.Date(2031, 3, 1, 12, 0, 0, 0, time.UTC),
		Names:     []string{"till-0001", "shop-0042", "bank-0007"},
		Edges:     []storage.EdgeChange{{U: till, V: shop, Mult: 1}, {U: shop, V: bank, Mult: 1}},
		Records:   []storage.RecordChange{{Node: till, Data: []byte{1}}, {Node: shop, Data: []byte{2}}, {Node: bank, Data: []byte{1}}},
		Blobs:     map[string][]byte{"progress": []byte("payments.csv line 2")},
	})
	if err != nil {
		panic(err)
	}
	src, err := st.SourceAt(10)
	if err != nil {
		panic(err)
	}
	defer src.Close()
	x, _ := src.Node("shop-0042")
	rec, _ := src.Record(x)
	nbrs, _ := src.Adjacent(x, nil)
	fmt.Println(src.Checkpoint().Seq, src.Checkpoint().Watermark.Format(time.DateOnly), rec, len(nbrs))
	seq, ok := st.SeqAtTime(time.Date(2031, 3, 2, 0, 0, 0, 0, time.UTC))
	fmt.Println(seq, ok)
	// Output:
	// 2 2031-03-01 [2] 2
	// 2 true
}
