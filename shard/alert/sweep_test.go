package alert

import (
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// TestSweepSetting: a rules file sets the sweep period; it is off by
// default, and a negative one is refused with its line.
func TestSweepSetting(t *testing.T) {
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	if cfg := DefaultConfig(cat); cfg.Sweep != 0 {
		t.Fatalf("default sweep %v, want off", cfg.Sweep)
	}
	cfg, err := ParseConfig([]byte("lookback: 1h\nsweep: 6h\n"), cat)
	if err != nil || cfg.Sweep != 6*time.Hour {
		t.Fatalf("sweep: 6h read as %v, %v", cfg.Sweep, err)
	}
	if _, err := ParseConfig([]byte("lookback: 1h\nsweep: -1h\n"), cat); err == nil || !strings.Contains(err.Error(), "line 2") || !strings.Contains(err.Error(), "sweep") {
		t.Fatalf("a negative sweep: %v, want an error naming line 2 and sweep", err)
	}
}
