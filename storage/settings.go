package storage

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"time"

	"orbitwatch/delta"
)

// Settings fix how a store's counts are to be read. They are recorded when
// the store is created; opening it later with other settings is an error
// naming the differing setting, never a silent reinterpretation.
type Settings struct {
	// Kind is the graph kind counted.
	Kind delta.Kind
	// MaxNodes is the largest graphlet size counted (e.g. 4 or 5).
	MaxNodes int
	// NumOrbits is the length of every orbit vector: the orbit count of the
	// catalog for Kind and MaxNodes.
	NumOrbits int
	// Window is the event-time window after which an add expires; 0 means
	// no window.
	Window time.Duration
}

// settingsMagic starts the settings record; a Badger directory without it
// is not an orbitwatch store.
var settingsMagic = []byte("orbitwatch storage v1\x00")

func (s Settings) validate() error {
	if s.Kind != delta.Undirected && s.Kind != delta.Directed && s.Kind != delta.Signed {
		return fmt.Errorf("settings: unknown graph kind %d", uint8(s.Kind))
	}
	if s.MaxNodes < 2 {
		return fmt.Errorf("settings: MaxNodes %d is below 2", s.MaxNodes)
	}
	if s.NumOrbits < 1 {
		return fmt.Errorf("settings: NumOrbits %d is below 1", s.NumOrbits)
	}
	if s.Window < 0 {
		return fmt.Errorf("settings: negative Window %v", s.Window)
	}
	return nil
}

// encode lays the settings out as magic, kind byte, then uvarints of
// MaxNodes and NumOrbits and a varint of Window in nanoseconds.
func (s Settings) encode() []byte {
	b := append([]byte(nil), settingsMagic...)
	b = append(b, byte(s.Kind))
	b = binary.AppendUvarint(b, uint64(s.MaxNodes))
	b = binary.AppendUvarint(b, uint64(s.NumOrbits))
	b = binary.AppendVarint(b, int64(s.Window))
	return b
}

func decodeSettings(b []byte) (Settings, error) {
	if !bytes.HasPrefix(b, settingsMagic) {
		return Settings{}, fmt.Errorf("settings record does not start with the orbitwatch marker")
	}
	b = b[len(settingsMagic):]
	if len(b) < 1 {
		return Settings{}, fmt.Errorf("settings record truncated")
	}
	s := Settings{Kind: delta.Kind(b[0])}
	b = b[1:]
	mx, n := binary.Uvarint(b)
	if n <= 0 {
		return Settings{}, fmt.Errorf("settings record: bad MaxNodes")
	}
	b = b[n:]
	no, n := binary.Uvarint(b)
	if n <= 0 {
		return Settings{}, fmt.Errorf("settings record: bad NumOrbits")
	}
	b = b[n:]
	w, n := binary.Varint(b)
	if n <= 0 || n != len(b) {
		return Settings{}, fmt.Errorf("settings record: bad Window")
	}
	s.MaxNodes, s.NumOrbits, s.Window = int(mx), int(no), time.Duration(w)
	return s, s.validate()
}

// mismatch names the first setting in which want differs from the
// recorded one, or returns nil.
func (s Settings) mismatch(want Settings) error {
	switch {
	case s.Kind != want.Kind:
		return fmt.Errorf("setting Kind is %v in the store, %v requested", s.Kind, want.Kind)
	case s.MaxNodes != want.MaxNodes:
		return fmt.Errorf("setting MaxNodes is %d in the store, %d requested", s.MaxNodes, want.MaxNodes)
	case s.NumOrbits != want.NumOrbits:
		return fmt.Errorf("setting NumOrbits is %d in the store, %d requested", s.NumOrbits, want.NumOrbits)
	case s.Window != want.Window:
		return fmt.Errorf("setting Window is %v in the store, %v requested", s.Window, want.Window)
	}
	return nil
}
