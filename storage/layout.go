package storage

import (
	"encoding/binary"
	"fmt"
	"math"
	"time"
)

// Key layout. Every key starts with one prefix byte; ids and sequences are
// big-endian so that Badger's key order is numeric order.
//
//	's'                    settings record (written once, version 1)
//	'f'                    retention floor: uvarint seq
//	'm'                    meta: the latest version of this key is the last
//	                       complete checkpoint; value = uvarint dictionary size
//	'c' seq(8)             checkpoint record: watermark(8), uvarint dictionary size
//	'w' watermark(8) seq(8) watermark index, empty value
//	'd' id(4)              dictionary: node name
//	'n' name               dictionary: id(4)
//	'e' x(4) y(4)          x joined to y: the edge {x,y} (stored under both
//	                       ends) or the arc x→y; value: uvarint multiplicity
//	'i' y(4) x(4)          Directed only: the arc x→y indexed under y
//	'r' id(4)              the node's record, as the counter wrote it
//	'b' name               applier blob
//	'k' key                keyed applier record
//	'a', 'o'               alert records and their node index (alerts.go)
//
// Adjacency is stored per edge, not per node bitmap: a changed edge costs
// two small entries per checkpoint, while a per-node bitmap would rewrite
// both endpoints' whole neighbour sets (kilobytes for a hub) into the
// history at every checkpoint that touches them. Every pair is stored
// under both of its nodes, so one prefix scan reads a node's neighbours at
// any version (what an as-of read derives a vector from). Records are
// opaque here: their layout is the counter's (package delta).
const (
	pSettings   = 's'
	pFloor      = 'f'
	pMeta       = 'm'
	pCheckpoint = 'c'
	pWatermark  = 'w'
	pDictID     = 'd'
	pDictName   = 'n'
	pEdge       = 'e'
	pInArc      = 'i'
	pRecord     = 'r'
	pBlob       = 'b'
	pKeyed      = 'k'
)

// checkpointPrefixes are the prefixes written at a checkpoint's version
// before the meta record that completes it: by Commit's write batch
// (several transactions, several checkpoints) and by PutAlerts ahead of
// the Commit of its cut. A crash can leave them above the last complete
// checkpoint, so repair covers them. The meta record alone is written in
// a final single transaction and is never torn.
var checkpointPrefixes = []byte{pDictID, pDictName, pEdge, pInArc, pRecord, pBlob, pKeyed, pAlert, pAlertNode, pCheckpoint, pWatermark}

func keyID(p byte, x uint32) []byte {
	k := make([]byte, 5)
	k[0] = p
	binary.BigEndian.PutUint32(k[1:], x)
	return k
}

func keySeq(p byte, s uint64) []byte {
	k := make([]byte, 9)
	k[0] = p
	binary.BigEndian.PutUint64(k[1:], s)
	return k
}

func keyName(p byte, name string) []byte {
	k := make([]byte, 1+len(name))
	k[0] = p
	copy(k[1:], name)
	return k
}

// appendPairKey appends p x y.
func appendPairKey(b []byte, p byte, x, y uint32) []byte {
	b = append(b, p)
	b = binary.BigEndian.AppendUint32(b, x)
	return binary.BigEndian.AppendUint32(b, y)
}

// Watermarks are stored as 8 bytes that sort like the time: Unix
// nanoseconds with the sign bit flipped. The zero time.Time is stored as the
// smallest value.
var (
	minWatermark = time.Unix(0, math.MinInt64+1)
	maxWatermark = time.Unix(0, math.MaxInt64)
)

func watermarkBits(t time.Time) (uint64, error) {
	if t.IsZero() {
		return 0, nil
	}
	if t.Before(minWatermark) || t.After(maxWatermark) {
		return 0, fmt.Errorf("watermark %v is outside the storable range (years 1678 to 2262)", t)
	}
	return uint64(t.UnixNano()) ^ (1 << 63), nil
}

func watermarkTime(b uint64) time.Time {
	if b == 0 {
		return time.Time{}
	}
	return time.Unix(0, int64(b^(1<<63))).UTC()
}

func getUvarint(b []byte, what string) (uint64, error) {
	x, n := binary.Uvarint(b)
	if n <= 0 || n != len(b) {
		return 0, fmt.Errorf("%s record is not a single uvarint (%d bytes)", what, len(b))
	}
	return x, nil
}

func beUint64(b []byte) uint64 { return binary.BigEndian.Uint64(b) }

// checkpointFlush is the flag byte of a flush checkpoint's record.
const checkpointFlush = 1

// decodeCheckpointRecord reads a 'c' record: watermark(8), uvarint
// dictionary size, and for a flush checkpoint (Checkpoint.Flush) one
// byte checkpointFlush.
func decodeCheckpointRecord(seq uint64, b []byte) (CheckpointInfo, error) {
	if len(b) < 9 {
		return CheckpointInfo{}, fmt.Errorf("corrupt record of checkpoint %d: %d bytes", seq, len(b))
	}
	n, k := binary.Uvarint(b[8:])
	if k <= 0 || len(b) > 8+k+1 || len(b) == 8+k+1 && b[8+k] != checkpointFlush {
		return CheckpointInfo{}, fmt.Errorf("corrupt record of checkpoint %d: %x", seq, b)
	}
	return CheckpointInfo{Seq: seq, Watermark: watermarkTime(beUint64(b)), Nodes: int(n), Flush: len(b) == 8+k+1}, nil
}
