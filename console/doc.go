// Package console is halovet's web console for the people who run a national licence
// register: pages rendered on the server (html/template, embedded templates and one style
// sheet, no script at all) on the HTTP listener of `halovet serve`, under /console/.
//
// The pages call the gRPC services in process (service.Server.InProcessConn), so they go
// through the same handlers, validation, limits and audit as any other caller. Every page
// and every form names the RPC whose policy it obeys (routes in console.go); a signed-in
// identity sees and does only what its role may do for that RPC, and a trader only its own
// company's licences and recorded shipments (the server limits the calls to it).
//
// Sign-in takes a secret (Authenticator) and keeps a server-side session behind a signed,
// HttpOnly, SameSite=Strict cookie (Secure when served over TLS) that expires when idle and
// after a fixed age. Every form carries the session's CSRF token; a post without it is
// refused with a page that says nothing was changed. Responses carry a strict Content
// Security Policy (no script, no inline style, nothing from elsewhere) and the usual
// hardening headers.
package console
