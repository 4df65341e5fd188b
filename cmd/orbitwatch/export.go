package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"strconv"

	"github.com/parquet-go/parquet-go"

	"orbitwatch/internal/progress"
	"orbitwatch/shard"
)

func init() {
	commands["export"] = command{"write the orbit matrix of a checkpoint as CSV or Parquet", runExport}
}

// parquetRowGroup bounds the rows a Parquet row group holds, and so the
// memory the writer buffers.
const parquetRowGroup = 1 << 17

func runExport(args []string) int {
	c := newReadCommand("export", true)
	format := c.fs.String("format", "", "`FORMAT`: csv (the format of count: header node,0,1,…) or parquet (columns node, o0, o1, …) (required)")
	out := c.fs.String("out", "", "output `FILE` (required); written whole or not at all")
	formatOK := func() error {
		if *format != "csv" && *format != "parquet" {
			return fmt.Errorf("--format must be csv or parquet, not %q", *format)
		}
		return nil
	}
	if code := c.parse(args, formatOK, c.required("out")); code != 0 {
		return code
	}
	st, cut, err := c.open()
	if err != nil {
		return fail("export", err)
	}
	defer st.Close()
	numOrbits := st.Settings().NumOrbits
	counting, err := shard.NewCounting(st.Settings().Kind, st.Settings().MaxNodes)
	if err != nil {
		return fail("export", err)
	}
	a, _, err := shard.StateAt(st, counting, cut.Seq)
	if err != nil {
		return fail("export", err)
	}
	prog := progress.New(os.Stderr, 0, "export nodes")
	err = createAtomic(*out, func(w io.Writer) error {
		cw := &countingWriter{w: w, prog: prog}
		var m matrixWriter
		if *format == "csv" {
			m = newMatrixCSV(cw, numOrbits)
		} else {
			m = newMatrixParquet(cw, numOrbits)
		}
		var vec []uint64
		for x, node := range a.Names() {
			var err error
			if vec, err = a.Vector(uint32(x), vec); err != nil {
				return err
			}
			if err := m.row(node, vec); err != nil {
				return err
			}
			prog.Add(1, 0)
		}
		return m.close()
	})
	prog.Done()
	if err != nil {
		return fail("export", err)
	}
	fmt.Fprintf(os.Stderr, "orbitwatch export: %d nodes × %d orbits at checkpoint %d (event time %s) to %s\n",
		cut.Nodes, numOrbits, cut.Seq, formatEventTime(eventTime(cut.Watermark), "none"), *out)
	return 0
}

// matrixWriter writes an orbit matrix one node at a time, in dictionary
// order.
type matrixWriter interface {
	row(node string, vec []uint64) error
	close() error
}

// matrixCSV writes the orbit matrix exactly as writeMatrix does (header
// node,0,1,…, RFC 4180 quoting by encoding/csv), but row by row, so an
// export never holds the whole matrix. Counts never need quoting, so only
// the node id goes through encoding/csv; the counts are appended as
// decimal digits to a reused line, and a row allocates nothing.
type matrixCSV struct {
	w      io.Writer
	field  *csv.Writer // quotes one node id into quoted
	one    []string    // the one-field record given to field
	quoted bytes.Buffer
	line   []byte
	err    error
}

func newMatrixCSV(w io.Writer, numOrbits int) *matrixCSV {
	m := &matrixCSV{w: w, one: make([]string, 1)}
	m.field = csv.NewWriter(&m.quoted)
	m.line = append(m.line, "node"...)
	for o := 0; o < numOrbits; o++ {
		m.line = append(m.line, ',')
		m.line = strconv.AppendInt(m.line, int64(o), 10)
	}
	m.line = append(m.line, '\n')
	_, m.err = w.Write(m.line)
	return m
}

func (m *matrixCSV) row(node string, vec []uint64) error {
	if m.err != nil {
		return m.err
	}
	m.quoted.Reset()
	m.one[0] = node
	m.field.Write(m.one)
	m.field.Flush()
	if m.err = m.field.Error(); m.err != nil {
		return m.err
	}
	q := m.quoted.Bytes()
	m.line = append(m.line[:0], q[:len(q)-1]...) // without the record's newline
	for _, c := range vec {
		m.line = append(m.line, ',')
		m.line = strconv.AppendUint(m.line, c, 10)
	}
	m.line = append(m.line, '\n')
	_, m.err = m.w.Write(m.line)
	return m.err
}

func (m *matrixCSV) close() error { return m.err }

// matrixParquet writes the orbit matrix as Parquet: a required string
// column "node" (BYTE_ARRAY, UTF8 logical type; ids are written byte for
// byte) and one required column per orbit named "o<id>" (o0, o1, …),
// physical INT64 with logical type INTEGER(64, unsigned), zstd-compressed,
// in row groups of at most parquetRowGroup rows. The columns' physical
// order is by name (node, o0, o1, o10, …); readers find them by name.
type matrixParquet struct {
	w       *parquet.GenericWriter[any]
	nodeCol int
	orbCol  []int // column index of orbit o
	rows    []parquet.Row
	names   []byte // the node ids of the buffered rows, back to back
	n       int
}

func newMatrixParquet(w io.Writer, numOrbits int) *matrixParquet {
	group := parquet.Group{"node": parquet.String()}
	for o := 0; o < numOrbits; o++ {
		group[parquetOrbitColumn(o)] = parquet.Uint(64)
	}
	schema := parquet.NewSchema("orbit_matrix", group)
	m := &matrixParquet{
		w:      parquet.NewGenericWriter[any](w, schema, parquet.Compression(&parquet.Zstd), parquet.MaxRowsPerRowGroup(parquetRowGroup)),
		orbCol: make([]int, numOrbits),
		rows:   make([]parquet.Row, 1024),
	}
	m.nodeCol = lookupColumn(schema, "node")
	for o := range m.orbCol {
		m.orbCol[o] = lookupColumn(schema, parquetOrbitColumn(o))
	}
	for i := range m.rows {
		m.rows[i] = make(parquet.Row, numOrbits+1)
	}
	return m
}

// parquetOrbitColumn is the Parquet column name of orbit o: "o" and its id.
func parquetOrbitColumn(o int) string { return "o" + strconv.Itoa(o) }

func lookupColumn(s *parquet.Schema, name string) int {
	c, ok := s.Lookup(name)
	if !ok {
		panic("export: parquet schema lacks column " + name)
	}
	return c.ColumnIndex
}

func (m *matrixParquet) row(node string, vec []uint64) error {
	r := m.rows[m.n]
	// A value refers to its bytes; when names grows, the values made
	// before keep the old array, so every buffered id stays intact until
	// WriteRows has copied it.
	start := len(m.names)
	m.names = append(m.names, node...)
	r[m.nodeCol] = parquet.ByteArrayValue(m.names[start:len(m.names):len(m.names)]).Level(0, 0, m.nodeCol)
	for o, c := range vec {
		r[m.orbCol[o]] = parquet.Int64Value(int64(c)).Level(0, 0, m.orbCol[o])
	}
	m.n++
	if m.n == len(m.rows) {
		return m.flush()
	}
	return nil
}

func (m *matrixParquet) flush() error {
	_, err := m.w.WriteRows(m.rows[:m.n])
	m.n, m.names = 0, m.names[:0]
	return err
}

func (m *matrixParquet) close() error {
	if err := m.flush(); err != nil {
		return err
	}
	return m.w.Close()
}

// countingWriter passes writes on and reports their bytes as progress.
type countingWriter struct {
	w    io.Writer
	prog *progress.Reporter
}

func (c *countingWriter) Write(p []byte) (int, error) {
	n, err := c.w.Write(p)
	c.prog.Add(0, int64(n))
	return n, err
}
