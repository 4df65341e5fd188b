package demo

import (
	_ "embed"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard/alert"
)

// AlertsYAML is the demo's alert rules file for undirected counting; its
// comments say how and why it differs from alert.DefaultConfig.
//
//go:embed alerts.yaml
var AlertsYAML []byte

// AlertConfig returns the demo's rules for cat: AlertsYAML for an
// undirected catalog (4 or more nodes), the built-in rules for the
// directed and signed kinds (alert.DirectedRules, alert.SignedRules),
// which this scenario was made to check and needs no change of.
func AlertConfig(cat *catalog.Catalog) (alert.Config, error) {
	if cat.Kind != delta.Undirected {
		return alert.DefaultConfig(cat), nil
	}
	return alert.ParseConfig(AlertsYAML, cat)
}
