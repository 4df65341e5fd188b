package api

import (
	"encoding/json"

	"orbitwatch/storage"
)

// AlertJSON returns a stored alert's body as GET /v1/alerts lists it: the
// alert with the verdict in force under "triage" (null when v is nil), so
// that the command line prints the same objects as the API.
func AlertJSON(body []byte, v *storage.Verdict) json.RawMessage {
	if v == nil {
		return withTriage(body, nil)
	}
	return withTriage(body, triageOf(*v))
}
