package main

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"reflect"
	"strconv"

	"github.com/parquet-go/parquet-go"

	"orbitwatch/delta/catalog"
	"orbitwatch/internal/progress"
	"orbitwatch/shard"
	"orbitwatch/shard/api"
	"orbitwatch/storage"
)

func init() {
	commands["export"] = command{"write the orbit matrix of a checkpoint as CSV or Parquet", runExport}
}

// parquetRowGroup bounds the rows a Parquet row group holds, and so the
// memory the writer buffers.
const parquetRowGroup = 1 << 17

func runExport(args []string) int {
	c := newReadCommand("export", true)
	format := c.fs.String("format", "", "`FORMAT`: csv (the format of count: header node,0,1,…) or parquet (columns node, o0, o1, … in orbit order, with the checkpoint's metadata)")
	out := c.fs.String("out", "", "output `FILE`, written whole or not at all; - for standard output")
	formatOK := func() error {
		if *format != "csv" && *format != "parquet" {
			return fmt.Errorf("--format must be csv or parquet, not %q", *format)
		}
		return nil
	}
	if code := c.parse(args, formatOK); code != 0 {
		return code
	}
	st, cut, err := c.open()
	if err != nil {
		return fail("export", err)
	}
	defer st.Close()
	set := st.Settings()
	counting, err := shard.NewCounting(set.Kind, set.MaxNodes)
	if err != nil {
		return fail("export", err)
	}
	a, _, err := shard.StateAt(st, counting, cut.Seq)
	if err != nil {
		return fail("export", err)
	}
	meta, err := exportMetadata(counting.Catalog, cut)
	if err != nil {
		return fail("export", err)
	}
	prog := progress.New(os.Stderr, 0, "export", progress.WithUnit("nodes"))
	write := func(w io.Writer) error {
		cw := &countingWriter{w: w, prog: prog}
		var m matrixWriter
		if *format == "csv" {
			m = newMatrixCSV(cw, set.NumOrbits)
		} else {
			m = newMatrixParquet(cw, set.NumOrbits, meta)
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
	}
	dest := *out
	if *out == "-" {
		dest = "standard output"
		bw := bufio.NewWriterSize(os.Stdout, 1<<16)
		if err = write(bw); err == nil {
			err = bw.Flush()
		}
	} else {
		err = createAtomic(*out, write)
	}
	prog.Done()
	if err != nil {
		return fail("export", err)
	}
	fmt.Fprintf(os.Stderr, "orbitwatch export: %d nodes × %d orbits at checkpoint %d (event time %s) to %s\n",
		cut.Nodes, set.NumOrbits, cut.Seq, formatEventTime(eventTime(cut.Watermark), "none"), dest)
	return 0
}

// Parquet key-value metadata keys of an export: enough to know, from the
// file alone, what its numbers count and as of when.
const (
	metaKind      = "orbitwatch.kind"           // undirected, directed or signed
	metaMaxNodes  = "orbitwatch.max_nodes"      // the largest graphlet size counted
	metaSeq       = "orbitwatch.checkpoint_seq" // the cut's log position
	metaEventTime = "orbitwatch.event_time"     // the cut's watermark, RFC 3339, "" when no event had a time
	metaOrbits    = "orbitwatch.orbits"         // JSON: per column o<id>, the orbit's and its graphlet's names
	metaVersion   = "orbitwatch.version"        // the version of the binary that wrote the file
)

// orbitMeta is one entry of the metaOrbits list.
type orbitMeta struct {
	Column   string `json:"column"`
	Orbit    int    `json:"orbit"`
	Name     string `json:"name"`
	Graphlet string `json:"graphlet"`
}

// exportMetadata is the key-value metadata of a Parquet export of cut.
func exportMetadata(cat *catalog.Catalog, cut storage.CheckpointInfo) ([][2]string, error) {
	orbits := make([]orbitMeta, cat.NumOrbits())
	for i, o := range cat.Orbits {
		orbits[i] = orbitMeta{Column: parquetOrbitColumn(i), Orbit: i, Name: o.Name, Graphlet: cat.Graphlets[o.Graphlet].Name}
	}
	names, err := json.Marshal(orbits)
	if err != nil {
		return nil, err
	}
	return [][2]string{
		{metaKind, cat.Kind.String()},
		{metaMaxNodes, strconv.Itoa(cat.MaxNodes)},
		{metaSeq, strconv.FormatUint(cut.Seq, 10)},
		{metaEventTime, formatEventTime(eventTime(cut.Watermark), "")},
		{metaOrbits, string(names)},
		{metaVersion, api.BuildVersion()},
	}, nil
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
// in row groups of at most parquetRowGroup rows. The columns come in
// orbit order (node, o0, o1, …, o9, o10, …), so a reader that takes them
// by position gets the matrix as the catalog numbers it; meta is written
// as the file's key-value metadata.
type matrixParquet struct {
	w       *parquet.GenericWriter[any]
	nodeCol int
	orbCol  []int // column index of orbit o
	rows    []parquet.Row
	names   []byte // the node ids of the buffered rows, back to back
	n       int
}

func newMatrixParquet(w io.Writer, numOrbits int, meta [][2]string) *matrixParquet {
	schema := orbitMatrixSchema(numOrbits)
	opts := []parquet.WriterOption{schema, parquet.Compression(&parquet.Zstd), parquet.MaxRowsPerRowGroup(parquetRowGroup)}
	for _, kv := range meta {
		opts = append(opts, parquet.KeyValueMetadata(kv[0], kv[1]))
	}
	m := &matrixParquet{
		w:      parquet.NewGenericWriter[any](w, opts...),
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

// orbitMatrixSchema is the Parquet schema of an orbit matrix with its
// columns in orbit order. parquet.Group sorts its fields by name, a Go
// struct keeps them in declaration order: the schema is that of a struct
// type made for the catalog's orbit count.
func orbitMatrixSchema(numOrbits int) *parquet.Schema {
	fields := make([]reflect.StructField, numOrbits+1)
	fields[0] = reflect.StructField{Name: "Node", Type: reflect.TypeFor[string](), Tag: `parquet:"node"`}
	for o := range numOrbits {
		col := parquetOrbitColumn(o)
		fields[o+1] = reflect.StructField{Name: "O" + col[1:], Type: reflect.TypeFor[uint64](), Tag: reflect.StructTag(`parquet:"` + col + `"`)}
	}
	return parquet.NewSchema("orbit_matrix", parquet.SchemaOf(reflect.New(reflect.StructOf(fields)).Interface()))
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
