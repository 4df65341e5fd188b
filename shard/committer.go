package shard

import (
	"context"
	"errors"
	"sync"
	"time"

	"orbitwatch/storage"
)

// Committer writes cuts to a store in the background, in log order: while
// one group of cuts is being made durable the applier goes on, and the
// cuts that queue up meanwhile go into the next group (storage.Commit
// makes a group durable with one sync). Put blocks while maxQueued cuts
// wait, so a slow disk slows the applier instead of filling memory.
type Committer struct {
	st        *storage.Store
	mu        sync.Mutex
	cond      *sync.Cond
	queue     []*storage.Checkpoint
	maxQueued int
	committed uint64 // last durable seq
	closed    bool
	err       error
	done      chan struct{}
	groups    int
	busy      time.Duration // spent in storage.Commit
	// OnCommit, when set before the first Put, hears of every group made
	// durable (from the committer's goroutine).
	OnCommit func(group []*storage.Checkpoint)
	// KeepHistory, when set before the first Put, lets the store discard
	// versions older than this much event time before each group's last
	// watermark (storage.Store.SetDiscardBefore).
	KeepHistory time.Duration
	// Gather, when set before the first Put, holds a commit back until
	// Gather after the last one began (or maxQueued cuts wait), so that a
	// log applied faster than the disk syncs pays one sync per Gather of
	// wall time rather than one per cut. A backfill sets it; a worker
	// serving reads does not (its cuts become durable as soon as they
	// can).
	Gather    time.Duration
	lastStart time.Time
	// OnStall, when set before the first Put, makes the committer wait
	// and try again when the store refuses a commit for want of space
	// (storage.ErrNoSpace: nothing was written), instead of failing: it
	// hears of every refusal, with the try's number and the pause before
	// the next one. Without it such a refusal fails the committer like any
	// other error (a backfill stops and says so). A worker sets it, so
	// that it goes on by itself once space is freed.
	OnStall func(err error, try int, pause time.Duration)
	stalled error  // the refusal being waited out; nil while commits go through
	retries uint64 // refused commits tried again
}

// Stall pauses between tries of a refused commit: doubling from
// stallPauseMin up to stallPauseMax.
const (
	stallPauseMin = 250 * time.Millisecond
	stallPauseMax = 5 * time.Second
)

// NewCommitter starts a committer for st that holds at most maxQueued
// cuts not yet being written (at least 1).
func NewCommitter(st *storage.Store, maxQueued int) *Committer {
	c := &Committer{st: st, maxQueued: max(maxQueued, 1), committed: st.Seq(), done: make(chan struct{})}
	c.cond = sync.NewCond(&c.mu)
	go c.run()
	return c
}

// Put queues cp behind the cuts before it. It returns the error of a
// failed commit, after which the committer takes nothing more.
func (c *Committer) Put(cp *storage.Checkpoint) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	for len(c.queue) >= c.maxQueued && c.err == nil && !c.closed {
		c.cond.Wait()
	}
	if c.err != nil {
		return c.err
	}
	if c.closed {
		return errors.New("shard: committer closed")
	}
	c.queue = append(c.queue, cp)
	c.cond.Broadcast()
	return nil
}

// WaitRoom blocks until Put would not block: a cut leaves the queue, the
// committer fails or closes, or ctx is done. A caller holding a lock that
// readers need waits here, without the lock, rather than in Put: while
// the store refuses commits the queue stays full.
func (c *Committer) WaitRoom(ctx context.Context) {
	stop := context.AfterFunc(ctx, func() {
		c.mu.Lock()
		c.cond.Broadcast()
		c.mu.Unlock()
	})
	defer stop()
	c.mu.Lock()
	defer c.mu.Unlock()
	for len(c.queue) >= c.maxQueued && c.err == nil && !c.closed && ctx.Err() == nil {
		c.cond.Wait()
	}
}

// Stalled returns how many refused commits the committer has tried again
// since it started, and the refusal it is waiting out now (nil while
// commits go through).
func (c *Committer) Stalled() (retries uint64, err error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.retries, c.stalled
}

// Wait blocks until every cut up to seq is durable (or a commit failed).
func (c *Committer) Wait(seq uint64) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	for c.committed < seq && c.err == nil && !(c.closed && len(c.queue) == 0) {
		c.cond.Wait()
	}
	return c.err
}

// Committed returns the last durable cut's seq.
func (c *Committer) Committed() uint64 {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.committed
}

// Busy returns how many groups were committed and the wall time spent
// committing them.
func (c *Committer) Busy() (groups int, d time.Duration) {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.groups, c.busy
}

// Close writes what is queued, stops the committer and returns the first
// commit error.
func (c *Committer) Close() error {
	c.mu.Lock()
	c.closed = true
	c.cond.Broadcast()
	c.mu.Unlock()
	<-c.done
	return c.err
}

func (c *Committer) run() {
	defer close(c.done)
	for {
		c.mu.Lock()
		for len(c.queue) == 0 && !c.closed && c.err == nil {
			c.cond.Wait()
		}
		for c.Gather > 0 && !c.closed && c.err == nil && len(c.queue) < c.maxQueued && time.Since(c.lastStart) < c.Gather {
			wake := time.AfterFunc(c.Gather-time.Since(c.lastStart), func() {
				c.mu.Lock()
				c.cond.Broadcast()
				c.mu.Unlock()
			})
			c.cond.Wait()
			wake.Stop()
		}
		c.lastStart = time.Now()
		if len(c.queue) == 0 || c.err != nil {
			c.mu.Unlock()
			return
		}
		group := c.queue
		c.queue = nil
		c.cond.Broadcast()
		c.mu.Unlock()
		t0 := time.Now()
		err := c.commit(group)
		took := time.Since(t0)
		if err == nil && c.OnCommit != nil {
			c.OnCommit(group)
		}
		c.mu.Lock()
		c.groups++
		c.busy += took
		if err != nil {
			c.err = err
		} else {
			c.committed = group[len(group)-1].Seq
		}
		c.cond.Broadcast()
		c.mu.Unlock()
	}
}

// commit makes group durable and moves the retention floor. With OnStall
// set it tries again, after growing pauses, while the store refuses the
// commit for want of space, until the commit goes through or Close is
// called (then the refusal is the committer's error).
func (c *Committer) commit(group []*storage.Checkpoint) error {
	for try := 1; ; try++ {
		err := c.st.Commit(group...)
		if err == nil {
			c.mu.Lock()
			c.stalled = nil
			c.mu.Unlock()
			return c.keepHistory(group[len(group)-1])
		}
		if c.OnStall == nil || !errors.Is(err, storage.ErrNoSpace) {
			return err
		}
		c.mu.Lock()
		c.stalled = err
		closed := c.closed
		if !closed {
			c.retries++
		}
		c.mu.Unlock()
		if closed {
			return err
		}
		pause := min(stallPauseMin<<min(try-1, 8), stallPauseMax)
		c.OnStall(err, try, pause)
		c.pause(pause)
	}
}

// keepHistory moves the store's retention floor to KeepHistory before
// last's watermark. A floor refused for want of space waits for a later
// group: retention is eventual anyway.
func (c *Committer) keepHistory(last *storage.Checkpoint) error {
	if c.KeepHistory <= 0 || last.Watermark.IsZero() {
		return nil
	}
	seq, ok := c.st.SeqAtTime(last.Watermark.Add(-c.KeepHistory))
	if !ok {
		return nil
	}
	if err := c.st.SetDiscardBefore(seq); err != nil && !errors.Is(err, storage.ErrNoSpace) {
		return err
	}
	return nil
}

// pause waits d, or less when Close is called.
func (c *Committer) pause(d time.Duration) {
	deadline := time.Now().Add(d)
	wake := time.AfterFunc(d, func() {
		c.mu.Lock()
		c.cond.Broadcast()
		c.mu.Unlock()
	})
	defer wake.Stop()
	c.mu.Lock()
	defer c.mu.Unlock()
	for !c.closed && time.Now().Before(deadline) {
		c.cond.Wait()
	}
}
