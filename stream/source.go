package stream

import (
	"bufio"
	"compress/gzip"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"hash"
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
	// Columns maps our keys (ts, op, src, dst, id) to the header names or
	// JSON keys the source uses for them, e.g. {"src": "payer"}. Keys not
	// mapped keep their own name.
	Columns map[string]string
}

// Keys of an event in a source, in the order of the key* constants.
var keyNames = [numKeys]string{"ts", "op", "src", "dst", "id"}

const (
	keyTS = iota
	keyOp
	keySrc
	keyDst
	keyID
	numKeys
)

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
			return names, fmt.Errorf("stream: column mapping: unknown key %q (want ts, op, src, dst or id)", k)
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

// decoder reads one record into ev. It returns io.EOF at the end, a
// *LineError for a bad record, or another error when reading fails.
type decoder interface {
	next(ev *Event) error
}

// Reader reads edge events from one source. It is not safe for concurrent
// use.
type Reader struct {
	name   string
	closer io.Closer
	raw    *countingReader
	size   int64
	gz     *gzip.Reader
	sp     *spool
	br     *bufio.Reader
	dec    decoder
	// hashed is how many content bytes have gone into h.
	hashed int64
	h      hash.Hash
	sumBuf [sha256.Size]byte
	idBuf  []byte
	sum    [sha256.Size]byte
	done   bool
	err    error
	// ev is the decoders' scratch event; a local would escape through
	// the decoder interface and cost an allocation per event.
	ev Event
}

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
	keys, err := resolveKeys(opts.Columns)
	if err != nil {
		return nil, err
	}
	r := &Reader{name: name, closer: closer, size: size, h: sha256.New()}
	r.raw = &countingReader{r: rd}
	rawBR := bufio.NewReaderSize(r.raw, 64<<10)
	content, gz, err := gunzipIfMagic(rawBR)
	if err != nil {
		return nil, fmt.Errorf("stream: %s: %w", name, err)
	}
	r.gz = gz
	r.sp = &spool{r: content}
	r.br = bufio.NewReaderSize(r.sp, 64<<10)
	format, err := chooseFormat(opts.Format, path, r.br)
	if err != nil {
		return nil, fmt.Errorf("stream: %s: %w", name, err)
	}
	// A UTF-8 byte order mark is content (it is hashed) but not data.
	if bom, _ := r.br.Peek(3); string(bom) == "\xef\xbb\xbf" {
		r.br.Discard(3)
		r.advance(3)
	}
	switch format {
	case "csv":
		r.dec, err = newCSVDecoder(r, keys)
	case "jsonl":
		r.dec = newJSONLDecoder(r, keys)
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
// record a *LineError, after which the following call goes on with the
// next record; any other error is final.
func (r *Reader) Next() (Event, error) {
	if r.err != nil {
		return Event{}, r.err
	}
	r.ev = Event{}
	err := r.dec.next(&r.ev)
	switch {
	case err == nil:
		if r.ev.ID == "" {
			r.ev.ID = r.derivedID(r.ev.Line)
		}
		return r.ev, nil
	case err == io.EOF:
		r.finish()
		return Event{}, r.err
	default:
		var le *LineError
		if errors.As(err, &le) {
			return Event{}, err
		}
		r.err = fmt.Errorf("stream: %s: %w", r.name, err)
		return Event{}, r.err
	}
}

// derivedID is the hex of the first 16 bytes of the SHA-256 of the content
// up to the end of the current record, ":" and the line number.
func (r *Reader) derivedID(line int) string {
	s := r.h.Sum(r.sumBuf[:0])
	r.idBuf = hex.AppendEncode(r.idBuf[:0], s[:16])
	r.idBuf = append(r.idBuf, ':')
	r.idBuf = strconv.AppendInt(r.idBuf, int64(line), 10)
	return string(r.idBuf)
}

// advance feeds the next n content bytes (already read from the spool by
// a decoder) to the hash and returns them; they stay valid until the next
// read from r.br.
func (r *Reader) advance(n int) []byte {
	b := r.sp.take(n)
	r.h.Write(b)
	r.hashed += int64(n)
	return b
}

// finish reads what the decoder left, completes the hash and sets r.err
// to io.EOF, or to the read error.
func (r *Reader) finish() {
	if _, err := r.br.WriteTo(io.Discard); err != nil {
		r.err = fmt.Errorf("stream: %s: %w", r.name, err)
		return
	}
	r.advance(r.sp.held())
	r.h.Sum(r.sum[:0])
	r.done = true
	r.err = io.EOF
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

// spool keeps a copy of the content bytes read through it until a decoder
// says how many of them made up its record (take), so that the record can
// be hashed and shown raw without a second buffer per decoder.
type spool struct {
	r   io.Reader
	buf []byte
	// off is the start of the bytes not yet taken.
	off int
}

func (s *spool) Read(p []byte) (int, error) {
	n, err := s.r.Read(p)
	if len(s.buf)+n > cap(s.buf) && s.off > 0 {
		s.buf = s.buf[:copy(s.buf, s.buf[s.off:])]
		s.off = 0
	}
	s.buf = append(s.buf, p[:n]...)
	return n, err
}

// take returns the next n bytes not yet taken. n must not exceed held.
func (s *spool) take(n int) []byte {
	if n > s.held() || n < 0 {
		panic("stream: spool take beyond the bytes read")
	}
	b := s.buf[s.off : s.off+n]
	s.off += n
	return b
}

// held is the number of bytes read but not yet taken.
func (s *spool) held() int { return len(s.buf) - s.off }
