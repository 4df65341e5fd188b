package stream

import (
	"bufio"
	"hash"
	"io"
)

// MaxLineBytes bounds one line of a source (one record), its line ending
// excluded. A longer line is rejected without being held in memory: its
// first rawKeep bytes are kept for the reject, the rest is read past.
const MaxLineBytes = 1 << 20

// rawKeep is how much of a line longer than MaxLineBytes a reject shows.
const rawKeep = 4096

// lineReader splits content into physical lines ending in "\n" (a final
// line without one counts too), feeds every byte to the content hash in
// order, and counts lines as an editor does.
type lineReader struct {
	br     *bufio.Reader
	h      hash.Hash
	hashed int64
	// lines is the number of complete lines returned so far.
	lines int
	// long assembles a line longer than br's buffer.
	long []byte
}

// next returns the next line without its ending ("\n" or "\r\n") and the
// line's length in bytes, which exceeds len(line) when the line was longer
// than MaxLineBytes and is cut to its first rawKeep bytes. It returns
// io.EOF when the content is exhausted, or the read error; the bytes of an
// unfinished line before a read error are hashed but not returned.
func (lr *lineReader) next() (line []byte, size int, err error) {
	frag, err := lr.br.ReadSlice('\n')
	lr.hash(frag)
	total, last2 := len(frag), tail2([2]byte{}, frag)
	line = frag
	if err == bufio.ErrBufferFull {
		lr.long = append(lr.long[:0], frag...)
		for err == bufio.ErrBufferFull {
			frag, err = lr.br.ReadSlice('\n')
			lr.hash(frag)
			total += len(frag)
			last2 = tail2(last2, frag)
			if room := MaxLineBytes + 2 - len(lr.long); room > 0 {
				lr.long = append(lr.long, frag[:min(room, len(frag))]...)
			}
		}
		line = lr.long
	}
	switch {
	case err == io.EOF && total == 0:
		return nil, 0, io.EOF
	case err != nil && err != io.EOF:
		return nil, 0, err
	}
	lr.lines++
	size = total
	if size > 0 && last2[1] == '\n' {
		size--
		if size > 0 && last2[0] == '\r' {
			size--
		}
	}
	if size > MaxLineBytes {
		return line[:rawKeep], size, nil
	}
	line = line[:size]
	if lr.lines == 1 && len(line) >= 3 && string(line[:3]) == "\xef\xbb\xbf" {
		// A UTF-8 byte order mark is content (hashed) but not data.
		line = line[3:]
		size -= 3
	}
	return line, size, nil
}

// tail2 returns the last two bytes seen once frag follows the bytes
// whose last two are t.
func tail2(t [2]byte, frag []byte) [2]byte {
	for _, c := range frag[max(0, len(frag)-2):] {
		t[0], t[1] = t[1], c
	}
	return t
}

func (lr *lineReader) hash(b []byte) {
	lr.h.Write(b)
	lr.hashed += int64(len(b))
}
