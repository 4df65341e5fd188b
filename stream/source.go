package stream

import (
	"bufio"
	"compress/gzip"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
)

// Options says how to read a source.
type Options struct {
	// Format is "csv", "jsonl", or "" to decide by the file name (.csv,
	// .jsonl, .ndjson, each optionally followed by .gz) and else by the
	// first byte of the content ('{' is JSON lines, anything else CSV).
	Format string
	// Columns maps our keys (ts, op, src, dst, id, sign, amount) to the
	// header names or JSON keys the source uses for them, e.g.
	// {"src": "payer"}. Keys not mapped keep their own name.
	Columns map[string]string
	// MinAmount, when not empty, keeps only events whose amount (the
	// amount column or key) is at least this decimal number; the others
	// are filtered (Next returns a *FilteredError). An event without a
	// readable amount is rejected.
	MinAmount string
}

// Keys of an event in a source, in the order of the key* constants.
var keyNames = [numKeys]string{"ts", "op", "src", "dst", "id", "sign", "amount"}

const (
	keyTS = iota
	keyOp
	keySrc
	keyDst
	keyID
	keySign
	keyAmount
	numKeys
)

// Check reports whether the options can read anything at all: a known
// format, known keys each mapped to its own name, a minimum amount that is
// a decimal number, and an amount column only with a minimum. Open and
// NewReader check them first; a caller can check them before it opens
// an input, to tell a wrong option from a wrong input.
func (o Options) Check() error {
	switch o.Format {
	case "", "csv", "jsonl":
	default:
		return fmt.Errorf("stream: unknown format %q (want csv or jsonl)", o.Format)
	}
	if _, err := resolveKeys(o.Columns); err != nil {
		return err
	}
	if o.MinAmount != "" {
		if _, ok := parseDecimal(o.MinAmount); !ok {
			return fmt.Errorf("stream: minimum amount %q is not a decimal number", o.MinAmount)
		}
	} else if _, ok := o.Columns["amount"]; ok {
		return errors.New("stream: an amount column is read only to filter by a minimum amount, and none is given")
	}
	return nil
}

// resolveKeys returns the source name of each key after Options.Columns.
func resolveKeys(cols map[string]string) ([numKeys]string, error) {
	names := keyNames
	for k, v := range cols {
		i := -1
		for j, n := range keyNames {
			if n == k {
				i = j
			}
		}
		if i < 0 {
			return names, fmt.Errorf("stream: column mapping: unknown key %q (want ts, op, src, dst, id, sign or amount)", k)
		}
		if v == "" {
			return names, fmt.Errorf("stream: column mapping: empty name for key %q", k)
		}
		names[i] = v
	}
	for i := range names {
		for j := i + 1; j < len(names); j++ {
			if names[i] == names[j] {
				return names, fmt.Errorf("stream: column mapping: keys %s and %s both read %q", keyNames[i], keyNames[j], names[i])
			}
		}
	}
	return names, nil
}

// Kinds of a cell: a key's value in one record.
const (
	kindNull   = iota // absent, null, or an empty CSV field
	kindString        // a CSV field, or a JSON string
	kindNumber        // a JSON number (its literal text)
	kindOther         // JSON true, false, an object or an array
)

// cell is one key's value in the current record. text points into the
// line or a decoder's scratch and is valid until the next line.
type cell struct {
	text []byte
	kind int
}

// decoder splits one non-blank line into the cells of the keys it reads;
// it returns "" or the reason the line is rejected.
type decoder interface {
	cells(line []byte, c *[numKeys]cell) string
}

// Reader reads edge events from one source. It is not safe for concurrent
// use.
type Reader struct {
	name   string
	format string
	closer io.Closer
	raw    *countingReader
	size   int64
	gz     *gzip.Reader
	lr     lineReader
	dec    decoder
	keys   [numKeys]string
	filler filler
	cells  [numKeys]cell

	record, blank, header int
	// cur is the raw text of the last record returned, valid until Next.
	cur []byte
	// unused lists source columns or keys no key reads, in order of first
	// appearance, at most maxUnused; unusedMore counts those past it.
	unused     []string
	unusedMore bool

	sumBuf [sha256.Size]byte
	idBuf  []byte
	sum    [sha256.Size]byte
	done   bool
	err    error
	// ev is the scratch event; a local would escape through the decoder
	// interface and cost an allocation per event.
	ev Event
}

// maxUnused bounds the list of unused JSON keys, which a hostile log
// could make endless.
const maxUnused = 32

// Open opens the source at path, or standard input when path is "-".
// Gzip content (magic bytes 1f 8b) is decompressed whatever the name.
// For CSV the header row is read here, so a missing column is reported by
// Open. The caller must Close the reader.
func Open(path string, opts Options) (*Reader, error) {
	if path == "-" {
		return newReader("stdin", "", os.Stdin, nil, -1, opts)
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("stream: %w", err)
	}
	size := int64(-1)
	if st, err := f.Stat(); err == nil && st.Mode().IsRegular() {
		size = st.Size()
	}
	r, err := newReader(path, path, f, f, size, opts)
	if err != nil {
		f.Close()
		return nil, err
	}
	return r, nil
}

// NewReader reads events from rd, named name in messages. Format "" is
// decided by the content only.
func NewReader(name string, rd io.Reader, opts Options) (*Reader, error) {
	return newReader(name, "", rd, nil, -1, opts)
}

func newReader(name, path string, rd io.Reader, closer io.Closer, size int64, opts Options) (*Reader, error) {
	if err := opts.Check(); err != nil {
		return nil, err
	}
	keys, _ := resolveKeys(opts.Columns)
	r := &Reader{name: name, closer: closer, size: size, keys: keys}
	if opts.MinAmount != "" {
		m, _ := parseDecimal(opts.MinAmount)
		r.filler.min, r.filler.minText = &m, opts.MinAmount
	}
	r.raw = &countingReader{r: rd}
	rawBR := bufio.NewReaderSize(r.raw, 64<<10)
	content, gz, err := gunzipIfMagic(rawBR)
	if err != nil {
		return nil, fmt.Errorf("stream: %s: %w", name, err)
	}
	r.gz = gz
	r.lr = lineReader{br: bufio.NewReaderSize(content, 64<<10), h: sha256.New()}
	if r.format, err = chooseFormat(opts.Format, path, r.lr.br); err != nil {
		return nil, fmt.Errorf("stream: %s: %w", name, err)
	}
	switch r.format {
	case "csv":
		r.dec, err = newCSVDecoder(r)
	case "jsonl":
		r.dec = &jsonlDecoder{r: r}
	}
	if err != nil {
		return nil, fmt.Errorf("stream: %s: %w", name, err)
	}
	return r, nil
}

func chooseFormat(format, path string, br *bufio.Reader) (string, error) {
	switch format {
	case "csv", "jsonl":
		return format, nil
	case "":
	default:
		return "", fmt.Errorf("unknown format %q (want csv or jsonl)", format)
	}
	base := strings.TrimSuffix(strings.ToLower(path), ".gz")
	switch {
	case strings.HasSuffix(base, ".csv"):
		return "csv", nil
	case strings.HasSuffix(base, ".jsonl"), strings.HasSuffix(base, ".ndjson"):
		return "jsonl", nil
	}
	// Peek one more byte at a time, so that a live stream (a pipe) is
	// not held up waiting for bytes that have not been written yet.
	for i := 1; i <= 512; i++ {
		head, err := br.Peek(i)
		if err != nil {
			break
		}
		switch c := head[i-1]; {
		case c == ' ' || c == '\t' || c == '\r' || c == '\n':
		case i <= 3 && string(head) == "\xef\xbb\xbf"[:i]:
		default:
			if c == '{' {
				return "jsonl", nil
			}
			return "csv", nil
		}
	}
	return "csv", nil
}

// Next returns the next event. At the end it returns io.EOF; for a bad
// record a *LineError, and for an event the amount filter drops a
// *FilteredError, after either of which the following call goes on with
// the next line; any other error is final and names the last complete
// line read.
func (r *Reader) Next() (Event, error) {
	if r.err != nil {
		return Event{}, r.err
	}
	for {
		line, size, err := r.lr.next()
		if err == io.EOF {
			r.finish()
			return Event{}, r.err
		}
		if err != nil {
			r.err = fmt.Errorf("stream: %s: reading after line %d (the last complete line): %w", r.name, r.lr.lines, err)
			return Event{}, r.err
		}
		if r.isBlank(line) {
			r.blank++
			continue
		}
		r.record++
		r.cur = line
		r.ev = Event{Line: r.record, FileLine: r.lr.lines}
		if size > MaxLineBytes {
			return Event{}, r.reject(fmt.Sprintf("line too long: %d bytes, the limit is %d (raw text cut to its first %d bytes)", size, MaxLineBytes, rawKeep))
		}
		if reason := r.dec.cells(line, &r.cells); reason != "" {
			return Event{}, r.reject(reason)
		}
		reason, filtered := r.filler.fill(&r.ev, &r.cells)
		if reason != "" {
			return Event{}, r.reject(reason)
		}
		if filtered != "" {
			return Event{}, &FilteredError{Line: r.record, FileLine: r.lr.lines, Reason: filtered}
		}
		if r.ev.ID == "" {
			r.ev.ID = r.derivedID(r.record)
		}
		return r.ev, nil
	}
}

// isBlank reports whether a line holds no record: empty in CSV, only
// spaces, tabs and carriage returns in JSON lines.
func (r *Reader) isBlank(line []byte) bool {
	if r.format == "csv" {
		return len(line) == 0
	}
	return skipSpace(line, 0) == len(line)
}

func (r *Reader) reject(reason string) error {
	return &LineError{Line: r.record, FileLine: r.lr.lines, Reason: reason, Raw: append([]byte(nil), r.cur...)}
}

// derivedID is the hex of the first 16 bytes of the SHA-256 of the content
// up to the end of the current record, ":" and the record number.
func (r *Reader) derivedID(record int) string {
	s := r.lr.h.Sum(r.sumBuf[:0])
	r.idBuf = hex.AppendEncode(r.idBuf[:0], s[:16])
	r.idBuf = append(r.idBuf, ':')
	r.idBuf = strconv.AppendInt(r.idBuf, int64(record), 10)
	return string(r.idBuf)
}

// finish completes the hash and sets r.err to io.EOF.
func (r *Reader) finish() {
	r.lr.h.Sum(r.sum[:0])
	r.done = true
	r.err = io.EOF
}

// Raw returns the text of the line of the last event or rejected line
// Next returned, without its line ending (cut to its first 4096 bytes when
// it was longer than MaxLineBytes). It is valid until the next call of
// Next; copy it to keep it.
func (r *Reader) Raw() []byte { return r.cur }

// Lines is the number of lines read so far, counted as an editor counts
// them (header and blank lines included; a last line without a line
// ending counts). After io.EOF it is the source's line count; after a
// final read error, the number of complete lines before it.
func (r *Reader) Lines() int { return r.lr.lines }

// Blank is the number of blank lines read so far: they hold no record,
// use up no record number and are neither events nor rejects.
func (r *Reader) Blank() int { return r.blank }

// Header is the number of header lines read: 1 for CSV, 0 for JSON lines.
func (r *Reader) Header() int { return r.header }

// Records is the number of data records read so far: events, rejected
// and filtered lines. Lines = Header + Blank + Records.
func (r *Reader) Records() int { return r.record }

// Format is "csv" or "jsonl".
func (r *Reader) Format() string { return r.format }

// Unused lists the source's columns (CSV, from the header) or keys (JSON
// lines, from the lines read so far) that no key reads, in order of first
// appearance; with more than 32 JSON keys the list ends in "…".
func (r *Reader) Unused() []string {
	out := append([]string(nil), r.unused...)
	if r.unusedMore {
		out = append(out, "…")
	}
	return out
}

// noteUnused adds a JSON member name to the unused keys when new.
func (r *Reader) noteUnused(name []byte) {
	for _, u := range r.unused {
		if u == string(name) {
			return
		}
	}
	if len(r.unused) == maxUnused {
		r.unusedMore = true
		return
	}
	r.unused = append(r.unused, string(name))
}

// Offset is the number of bytes read so far from the underlying source
// (compressed bytes for gzip), for progress. Read-ahead makes it run up to
// 64 KiB ahead of the events returned.
func (r *Reader) Offset() int64 { return r.raw.n }

// Size is the size of the underlying file in bytes, or -1 when unknown
// (standard input, a pipe).
func (r *Reader) Size() int64 { return r.size }

// Name is the path given to Open, "stdin", or the name given to NewReader.
func (r *Reader) Name() string { return r.name }

// Sum returns the SHA-256 of the whole (decompressed) content, and true,
// once Next has returned io.EOF; before that it returns false. It equals
// HashFile of the same file.
func (r *Reader) Sum() ([sha256.Size]byte, bool) { return r.sum, r.done }

// Close closes the file opened by Open; it does not close standard input
// or a reader given to NewReader.
func (r *Reader) Close() error {
	if r.gz != nil {
		r.gz.Close()
	}
	if r.closer != nil {
		return r.closer.Close()
	}
	return nil
}

// HashFile returns the SHA-256 of the content of the file at path,
// decompressed when it is gzip (magic bytes 1f 8b), so that one edge log
// has one identity whatever its name or compression.
func HashFile(path string) ([sha256.Size]byte, error) {
	var sum [sha256.Size]byte
	f, err := os.Open(path)
	if err != nil {
		return sum, fmt.Errorf("stream: %w", err)
	}
	defer f.Close()
	content, gz, err := gunzipIfMagic(bufio.NewReaderSize(f, 64<<10))
	if err != nil {
		return sum, fmt.Errorf("stream: %s: %w", path, err)
	}
	if gz != nil {
		defer gz.Close()
	}
	h := sha256.New()
	if _, err := io.Copy(h, content); err != nil {
		return sum, fmt.Errorf("stream: %s: %w", path, err)
	}
	h.Sum(sum[:0])
	return sum, nil
}

// gunzipIfMagic returns a decompressing reader (and the gzip.Reader to
// close) when br starts with the gzip magic bytes 1f 8b, else br itself.
func gunzipIfMagic(br *bufio.Reader) (io.Reader, *gzip.Reader, error) {
	magic, _ := br.Peek(2)
	if len(magic) < 2 || magic[0] != 0x1f || magic[1] != 0x8b {
		return br, nil, nil
	}
	gz, err := gzip.NewReader(br)
	if err != nil {
		return nil, nil, fmt.Errorf("gzip: %w", err)
	}
	return gz, gz, nil
}

// countingReader counts the bytes read through it.
type countingReader struct {
	r io.Reader
	n int64
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	return n, err
}
