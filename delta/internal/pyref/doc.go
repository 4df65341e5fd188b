// Package pyref runs outside reference implementations (networkx 2.8 and
// python-igraph 0.10) in a child Python process, for tests that hold
// orbitwatch's counts against them. Graphs go to the script's stdin as
// JSON; results come back as JSON. Calls are batched: one process answers
// any number of calls, so a test can check many checkpoints at once.
//
// The interpreter is ORBITWATCH_PYTHON if set, else /usr/bin/python3, else
// python3 on PATH — the first of them that imports both networkx and
// igraph. If none does, calls fail with an error saying so; tests must
// report that as a failure, never skip.
//
// The Python side is embedded from py/*.py, loaded in name order: 0_core.py
// holds the dispatcher and the @ref decorator; each other file registers
// functions. To add a reference, add a .py file with @ref("name") functions
// and a Go file with a typed wrapper around Batch.Call.
//
// It is for tests only, not for production paths.
package pyref
