package cpuclock

import (
	"testing"
	"time"
)

// TestClockCountsWork spins and demands a positive, growing CPU time.
func TestClockCountsWork(t *testing.T) {
	c := Start()
	x := 1
	for i := range 20_000_000 {
		x = x*31 + i
	}
	lap := c.Lap()
	for i := range 20_000_000 {
		x = x*31 + i
	}
	total := c.Stop()
	if lap <= 0 || total <= lap {
		t.Fatalf("clock read %v then %v (x=%d)", lap, total, x)
	}
}

// TestClockIsFine: a short spin reads as a short positive time, not as
// zero or a scheduler tick.
func TestClockIsFine(t *testing.T) {
	c := Start()
	x := 1
	for i := range 20_000 {
		x = x*31 + i
	}
	d := c.Stop()
	if d <= 0 || d >= time.Millisecond {
		t.Fatalf("20k multiplications took %v (x=%d)", d, x)
	}
}
