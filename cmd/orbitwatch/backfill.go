package main

import (
	"context"
	"encoding/hex"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"os"
	"os/signal"
	"syscall"
	"time"

	"orbitwatch/internal/progress"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

func init() {
	commands["backfill"] = command{"apply archived edge logs to a data directory, with crash-safe checkpoints", runBackfill}
}

// inputsBlob is the storage blob recording which inputs a data directory
// has applied: by content hash, so a renamed file is still known.
const inputsBlob = "inputs"

type inputRecord struct {
	SHA256 string `json:"sha256"`
	Name   string `json:"name"` // as last given, for messages only
	Lines  uint64 `json:"lines"`
	Done   bool   `json:"done"`
}

func runBackfill(args []string) int {
	fs := flag.NewFlagSet("backfill", flag.ContinueOnError)
	var cf countingFlags
	var inf inputFlags
	var af alertFlags
	var cuts cutFlags
	cf.register(fs)
	inf.register(fs)
	cuts.register(fs)
	fs.StringVar(&af.path, "alerts", "", "alert rules file (YAML) evaluated at every cut; default: the built-in rules")
	noAlerts := fs.Bool("no-alerts", false, "evaluate no alert rules")
	data := fs.String("data", "", "data `DIR` (created when missing)")
	var windowFlag, keepFlag spanFlag
	fs.Var(&windowFlag, "window", "event-time window after which an add expires, e.g. 30d or 12h (default: none)")
	registerKeepHistory(fs, &keepFlag)
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	window, keep := windowFlag.d, keepFlag.d
	c, err := cf.counting()
	if err == nil {
		err = inf.check()
	}
	if err != nil {
		return fail("backfill", err)
	}
	var stage *shard.AlertStage
	if !*noAlerts {
		ev, _, err := af.setup(c.Catalog)
		if err != nil {
			return fail("backfill", err)
		}
		stage = shard.NewAlertStage(ev, c)
	}
	// Every input is checked before anything is applied, so a file that is
	// not an edge log changes no state.
	hashes, total, err := checkInputs(&inf)
	if err != nil {
		return fail("backfill", err)
	}
	st, err := storage.Open(*data, storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits(), Window: window})
	if err != nil {
		return fail("backfill", spaceFirst(err))
	}
	defer st.Close()
	a, state, err := shard.LoadApplier(c, window, cuts.cuts(), st)
	if err != nil {
		return fail("backfill", err)
	}
	if stage != nil {
		if err := stage.Restore(st, state); err != nil {
			return fail("backfill", err)
		}
	}
	records, err := matchInputs(state.Blobs[inputsBlob], inf.inputs, hashes)
	if err != nil {
		return fail("backfill", err)
	}

	ctx, cancel := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer cancel()
	com := shard.NewCommitter(st, 64)
	com.Gather = backfillGather
	com.KeepHistory = shard.KeepFor(keep, stage, cuts.cuts())
	b := &backfill{st: st, com: com, applier: a, stage: stage, records: records}
	a.OnCut = b.cut
	rep := progress.New(os.Stderr, total, "backfill")
	in := &ingest{
		flags: &inf, applier: a, resume: state.Seq, progress: rep, appendRejects: true,
		skip: func(i int) (uint64, bool) {
			r := records[i]
			if r.Done {
				rep.Add(0, sizeOf(inf.inputs[i]))
			}
			return r.Lines, r.Done
		},
		fileDone: func(i int, lines uint64) { records[i].Lines, records[i].Done = lines, true },
		stop:     func() error { return context.Cause(ctx) },
	}
	runErr := in.run()
	rep.Done()
	if runErr == nil || errors.Is(runErr, context.Canceled) || errors.Is(runErr, errStrict) {
		// Stopped cleanly (finished, Ctrl-C, or --strict): what was applied
		// is made durable, so a rerun goes on from here.
		if err := a.Cut(); err != nil && runErr == nil {
			runErr = err
		}
	}
	if err := com.Close(); err != nil && (runErr == nil || errors.Is(runErr, context.Canceled)) {
		runErr = err
	}
	groups, busy := com.Busy()
	var more []string
	if state.Seq > 0 {
		more = append(more, fmt.Sprintf("resumed at checkpoint %d", state.Seq))
	}
	more = append(more, fmt.Sprintf("data directory %s at checkpoint %d (%d nodes, %d edges); this run wrote %d cuts (%d records, %d alerts) in %d commits taking %.1f s beside the counting",
		*data, st.Seq(), a.Dict().Len(), a.Graph().NumEdges(), b.cuts, b.recordsWritten, b.alerts, groups, busy.Seconds()))
	in.summary("backfill", more...)
	if errors.Is(runErr, context.Canceled) {
		fmt.Fprintln(os.Stderr, "orbitwatch backfill: interrupted; rerun with the same arguments to go on")
		return exitInterrupted
	}
	if runErr != nil {
		return fail("backfill", spaceFirst(runErr))
	}
	return 0
}

// spaceFirst returns the store's refusal for want of space when err holds
// one: it names the directory, the free and the needed space and where the
// store stays, whatever cut or line met it. Other errors are returned as
// they are.
func spaceFirst(err error) error {
	var se *storage.SpaceError
	if errors.As(err, &se) {
		return se
	}
	return err
}

// backfillGather is how long a backfill's committer gathers cuts before a
// commit: one sync per second at most, whatever the pace of the cuts.
const backfillGather = time.Second

// cutFlags are the flags that place cuts.
type cutFlags struct {
	every time.Duration
	lines uint64
}

func (f *cutFlags) register(fs *flag.FlagSet) {
	fs.DurationVar(&f.every, "cut-every", shard.DefaultCutEvery, "commit a cut at every multiple of this much event time (0: none)")
	fs.Uint64Var(&f.lines, "checkpoint-every", 0, "also commit a cut after every N log positions (0: none)")
}

func (f *cutFlags) cuts() shard.Cuts { return shard.Cuts{Every: f.every, Lines: f.lines} }

type backfill struct {
	st      *storage.Store
	com     *shard.Committer
	applier *shard.Applier
	stage   *shard.AlertStage
	records []inputRecord

	cuts, recordsWritten, alerts uint64 // written by this run
}

// registerKeepHistory adds --keep-history, which backfill, serve and
// worker share.
func registerKeepHistory(fs *flag.FlagSet, keep *spanFlag) {
	fs.Var(keep, "keep-history", "keep checkpoint versions this far back in event time, e.g. 90d (default: all; never less than the alert rules' look-back needs)")
}

// cut takes one cut: the alert stage scores it, the input records go with
// it, and the committer writes it.
func (b *backfill) cut(cp *storage.Checkpoint) error {
	blob, err := json.Marshal(b.records)
	if err != nil {
		return err
	}
	cp.Blobs[inputsBlob] = blob
	if b.stage != nil {
		got, err := b.stage.Evaluate(b.applier, cp, nil, time.Now())
		if err != nil {
			return fmt.Errorf("cut at seq %d: %w", cp.Seq, err)
		}
		b.alerts += uint64(len(got))
	}
	if err := b.com.Put(cp); err != nil {
		return fmt.Errorf("cut at seq %d: %w", cp.Seq, err)
	}
	b.cuts++
	b.recordsWritten += uint64(len(cp.Records))
	return nil
}

// checkInputs opens every input once (a bad header is an error here, before
// any state changes) and hashes its content.
func checkInputs(inf *inputFlags) ([]string, int64, error) {
	if len(inf.inputs) == 0 {
		return nil, 0, usagef("--input FILE is required")
	}
	var total int64
	hashes := make([]string, len(inf.inputs))
	for i, path := range inf.inputs {
		if path == "-" {
			return nil, 0, usagef("--input -: backfill reads files, not standard input: it must know a file again after a crash")
		}
		r, err := inf.open(path)
		if err != nil {
			return nil, 0, err
		}
		r.Close()
		h, err := stream.HashFile(path)
		if err != nil {
			return nil, 0, fmt.Errorf("%s: %w", path, err)
		}
		hashes[i] = hex.EncodeToString(h[:])
		total += sizeOf(path)
	}
	return hashes, total, nil
}

func sizeOf(path string) int64 {
	if fi, err := os.Stat(path); err == nil {
		return fi.Size()
	}
	return 0
}

// matchInputs lines the given inputs up with the recorded ones: the inputs
// already applied must come first, in the same order, with the same
// content; new inputs may follow.
func matchInputs(blob []byte, paths []string, hashes []string) ([]inputRecord, error) {
	var recs []inputRecord
	if len(blob) > 0 {
		if err := json.Unmarshal(blob, &recs); err != nil {
			return nil, fmt.Errorf("stored input records: %w", err)
		}
	}
	if len(paths) < len(recs) {
		return nil, fmt.Errorf("this data directory has applied %d inputs, %d given: give the same files in the same order, then any new ones", len(recs), len(paths))
	}
	for i := range paths {
		if i < len(recs) {
			if recs[i].SHA256 != hashes[i] {
				return nil, fmt.Errorf("input %d (%s) is not the content this data directory applied at that position (%s, sha256 %s…)", i+1, paths[i], recs[i].Name, recs[i].SHA256[:12])
			}
			if !recs[i].Done && i+1 < len(recs) {
				return nil, fmt.Errorf("stored input records are inconsistent at input %d", i+1)
			}
			recs[i].Name = paths[i]
			continue
		}
		recs = append(recs, inputRecord{SHA256: hashes[i], Name: paths[i]})
	}
	return recs, nil
}
