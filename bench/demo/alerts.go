package demo

import (
	_ "embed"

	"orbitwatch/delta/catalog"
	"orbitwatch/shard/alert"
)

// AlertsYAML is the demo's alert rules file; its comments say how and why
// it differs from alert.DefaultConfig.
//
//go:embed alerts.yaml
var AlertsYAML []byte

// AlertConfig parses AlertsYAML for cat (undirected, 4 or more nodes).
func AlertConfig(cat *catalog.Catalog) (alert.Config, error) {
	return alert.ParseConfig(AlertsYAML, cat)
}
