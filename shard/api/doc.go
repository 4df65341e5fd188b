// Package api is the HTTP face of a running worker: node reads now and as
// of a cut, a node's history and neighbourhood, alerts, the catalog,
// status, health, Prometheus metrics and the web page, all read through
// shard.View. It is a view: it changes nothing in the worker's counts, and
// a worker runs the same without it. The one thing it writes is an
// investigator's verdict on a stored alert (triage), kept in the worker's
// store beside the alert.
//
// Server listens and guards: without a credential it admits everyone on a
// loopback address and refuses to listen anywhere else; with bearer tokens
// (a tokens file, see Tokens) or TLS client certificates it admits their
// holders, with a read or an admin role. Every request passes the Host
// check against DNS rebinding, the size caps and the timeouts (Guard,
// ServerConfig).
//
// It is not for counting or storing (packages shard, storage), nor for
// deciding what an alert means.
package api
