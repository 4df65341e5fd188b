// Package gdv compares graphlet degree vectors: node with node, and
// network with network.
//
// Node with node: Metric is the GDV signature distance of Milenković &
// Pržulj 2008 on log-scaled counts with the paper's orbit weights
// (Weights, derived from the catalog), the one function behind both the
// signature-shift alert rule and the similar-accounts search; Largest
// names the orbits that differ most. Index holds the signatures of every
// node in one contiguous float32 array, updated in place (Set, or a Batch
// per cut), and answers exact k-nearest queries by scanning it on every
// core.
//
// Network with network: Profile summarises one orbit matrix (the GDVs of
// all nodes at a cut) by the Spearman correlations between orbits and the
// distribution of each orbit's counts; Compare gives the graphlet
// correlation distance of Yaveroğlu et al. 2014 (GCD-11 with
// GCD11Orbits), the orbit pairs whose correlation moved most and the
// per-orbit distribution shifts.
//
// The package is pure: no I/O, no clocks, no mutable globals. It is not
// for counting orbits (delta and its engines), for reading vectors as of a
// time (storage) or for deciding what is fraud: a near signature or a
// drift is a lead for a person to look at.
package gdv
