// Package progress reports how far a long piece of work has got (backfill,
// recount, export, publish): events done, bytes done out of a known total,
// events per second and the time left.
//
// On a terminal it redraws one line with a bar; otherwise it writes a plain
// line every interval, so logs stay readable. Add is two atomic additions
// and is safe from any number of goroutines; a single ticker goroutine does
// all the formatting and writing.
//
// It is not a logger and not a metrics exporter: it keeps no history and
// exposes nothing but what it prints.
package progress
