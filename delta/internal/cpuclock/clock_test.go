package cpuclock

import "testing"

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
