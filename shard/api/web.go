package api

import (
	"embed"
	"io/fs"
	"net/http"
)

//go:embed web
var webFiles embed.FS

// WebHandler serves the page: GET / is web/index.html and /ui/… the
// script and style sheet beside it, all embedded in the binary (no CDN,
// no external fonts). The page reads the API of the same origin
// (/v1/catalog, /v1/nodes/{id} with /history, /neighbors and /similar,
// /v1/alerts, /v1/drift, /v1/status) and posts verdicts to
// /v1/alerts/{id}/triage. What it shows is named in the URL fragment:
// #node=ID, with &at=TIME (event time) or &seq=N (a cut) for a view as of
// that point. Where the API asks for a bearer token (401, or 403 for a
// verdict without the admin role), the page asks the user for one and
// keeps it for the browser tab only (sessionStorage).
func WebHandler() http.Handler {
	sub, err := fs.Sub(webFiles, "web")
	if err != nil {
		panic("api: embedded web assets: " + err.Error())
	}
	files := http.FileServerFS(sub)
	mux := http.NewServeMux()
	mux.Handle("GET /ui/", http.StripPrefix("/ui/", files))
	mux.HandleFunc("GET /{$}", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Cache-Control", "no-cache")
		http.ServeFileFS(w, r, sub, "index.html")
	})
	return mux
}
