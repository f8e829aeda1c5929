package console

import (
	"bytes"
	"context"
	"crypto/rand"
	"embed"
	"errors"
	"fmt"
	"html/template"
	"io/fs"
	"log/slog"
	"net/http"
	"net/url"
	"strings"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

//go:embed templates/*.html
var templateFS embed.FS

//go:embed static
var staticFS embed.FS

// Prefix is the path the console is served under.
const Prefix = "/console/"

// Config configures the console.
type Config struct {
	// Conn reaches the gRPC services (service.Server.InProcessConn).
	Conn grpc.ClientConnInterface
	// Auth checks the secrets given at sign-in.
	Auth Authenticator
	// Policy says which role may call which RPC; every page and form asks it.
	Policy Policy
	// CallContext prepares the context of a call made for a signed-in identity (the
	// credentials the call carries); nil sends the call as it is.
	CallContext func(ctx context.Context, id Identity, fullMethod string) context.Context
	// IdleTimeout ends a session unused this long (default 30 minutes); MaxAge ends any
	// session this old (default 8 hours).
	IdleTimeout, MaxAge time.Duration
	// MaxUploadBytes bounds an uploaded batch file (default 32 MiB).
	MaxUploadBytes int64
	// Now is the clock (default time.Now); the current year's figures are provisional.
	Now func() time.Time
	// Logger receives the console's log lines (default slog.Default()).
	Logger *slog.Logger
}

// Console is the console's HTTP handler.
type Console struct {
	cfg      Config
	sessions *sessions
	pages    map[string]*template.Template
	mux      *http.ServeMux
	batches  *batchStore
	log      *slog.Logger
}

// New builds the console.
func New(cfg Config) (*Console, error) {
	if cfg.Conn == nil || cfg.Auth == nil || cfg.Policy == nil {
		return nil, errors.New("console: Conn, Auth and Policy are required")
	}
	if cfg.IdleTimeout <= 0 {
		cfg.IdleTimeout = 30 * time.Minute
	}
	if cfg.MaxAge <= 0 {
		cfg.MaxAge = 8 * time.Hour
	}
	if cfg.MaxUploadBytes <= 0 {
		cfg.MaxUploadBytes = 32 << 20
	}
	if cfg.Now == nil {
		cfg.Now = time.Now
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	key := make([]byte, 32)
	if _, err := rand.Read(key); err != nil {
		return nil, fmt.Errorf("console: session key: %w", err)
	}
	c := &Console{cfg: cfg, sessions: newSessions(key, cfg.IdleTimeout, cfg.MaxAge, cfg.Now), log: cfg.Logger,
		batches: newBatchStore(cfg.Now)}
	if err := c.parseTemplates(); err != nil {
		return nil, err
	}
	c.routes()
	return c, nil
}

// RPC names the pages are mapped to.
const (
	rpcResolve      = "/halovet.v1.CatalogueService/ResolveIdentifier"
	rpcGetEntry     = "/halovet.v1.CatalogueService/GetEntry"
	rpcListLicences = "/halovet.v1.LicensingService/ListLicences"
	rpcGetLicence   = "/halovet.v1.LicensingService/GetLicence"
	rpcSetStatus    = "/halovet.v1.LicensingService/SetLicenceStatus"
	rpcAmend        = "/halovet.v1.LicensingService/AmendLicence"
	rpcCheckBatch   = "/halovet.v1.ShipmentService/CheckShipments"
	rpcRecordBatch  = "/halovet.v1.ShipmentService/RecordShipments"
	rpcAssess       = "/halovet.v1.ConsumptionService/AssessCompliance"
)

// page is one route: its pattern, the RPC whose policy it obeys ("" for the pages every
// signed-in identity sees), whether it changes data (a form post, CSRF-checked), and its
// handler.
type page struct {
	pattern string
	rpc     string
	post    bool
	h       func(w http.ResponseWriter, r *http.Request, rq *request)
}

// request is what a page handler gets besides the HTTP request.
type request struct {
	s   *session
	rpc string
}

func (rq *request) id() Identity { return rq.s.identity }

// pageTable lists every page; TestEveryPageIsMapped checks it.
func (c *Console) pageTable() []page {
	return []page{
		{"GET /console/{$}", "", false, c.home},
		{"GET /console/catalogue", rpcResolve, false, c.catalogue},
		{"GET /console/catalogue/entries/{designation}", rpcGetEntry, false, c.entry},
		{"GET /console/licences", rpcListLicences, false, c.licences},
		{"GET /console/licences/{number}", rpcGetLicence, false, c.licence},
		{"POST /console/licences/{number}/status", rpcSetStatus, true, c.setLicenceStatus},
		{"POST /console/licences/{number}/quota", rpcAmend, true, c.amendQuota},
		{"GET /console/batches", rpcCheckBatch, false, c.batchForm},
		{"POST /console/batches", rpcCheckBatch, true, c.batchUpload},
		{"GET /console/batches/{id}", rpcCheckBatch, false, c.batchPage},
		{"GET /console/batches/{id}/report.csv", rpcCheckBatch, false, c.batchReport},
		{"POST /console/batches/{id}/record", rpcRecordBatch, true, c.batchRecord},
		{"GET /console/shipments", rpcListShipments, false, c.shipments},
		{"GET /console/shipments/{id}", rpcGetShipment, false, c.shipment},
		{"POST /console/shipments/{id}/void", rpcVoidShipment, true, c.voidShipment},
		{"POST /console/shipments/{id}/correct", rpcCorrect, true, c.correctShipment},
		{"GET /console/year", rpcAssess, false, c.year},
		{"GET /console/year/chart.svg", rpcAssess, false, c.yearChartSVG},
		{"GET /console/year/chart.png", rpcAssess, false, c.yearChartPNG},
		{"GET /console/year/report.json", rpcYearReport, false, c.yearReportJSON},
		{"GET /console/audit", rpcAuditList, false, c.audit},
		{"POST /console/sign-out", "", true, c.signOut},
	}
}

func (c *Console) routes() {
	c.mux = http.NewServeMux()
	static, _ := fs.Sub(staticFS, "static")
	c.mux.Handle("GET /console/static/", http.StripPrefix("/console/static/", http.FileServerFS(static)))
	c.mux.HandleFunc("GET /console/sign-in", c.signInForm)
	c.mux.HandleFunc("POST /console/sign-in", c.signIn)
	for _, p := range c.pageTable() {
		c.mux.HandleFunc(p.pattern, c.guard(p))
	}
	c.mux.HandleFunc("/console/", func(w http.ResponseWriter, r *http.Request) {
		c.fail(w, r, nil, http.StatusNotFound, "No such page", "There is no console page at "+r.URL.Path+".")
	})
}

// ServeHTTP sets the security headers and serves the page.
func (c *Console) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	h := w.Header()
	h.Set("Content-Security-Policy", "default-src 'none'; style-src 'self'; img-src 'self'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'")
	h.Set("X-Content-Type-Options", "nosniff")
	h.Set("X-Frame-Options", "DENY")
	h.Set("Referrer-Policy", "no-referrer")
	h.Set("Cross-Origin-Opener-Policy", "same-origin")
	h.Set("Cross-Origin-Resource-Policy", "same-origin")
	h.Set("Permissions-Policy", "camera=(), microphone=(), geolocation=()")
	if !strings.HasPrefix(r.URL.Path, "/console/static/") {
		h.Set("Cache-Control", "no-store")
	}
	if r.TLS != nil {
		h.Set("Strict-Transport-Security", "max-age=31536000")
	}
	if r.URL.Path == "/console" {
		http.Redirect(w, r, Prefix, http.StatusSeeOther)
		return
	}
	c.mux.ServeHTTP(w, r)
}

// guard checks the session, the form token of a post and the role's policy before the
// page runs; each refusal is a page of its own that says what happened and that nothing
// was changed.
func (c *Console) guard(p page) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		s, st := c.sessions.lookup(r)
		switch st {
		case sessionNone:
			if p.post {
				c.fail(w, r, nil, http.StatusUnauthorized, "Not signed in", "This form needs a signed-in session. Nothing was changed.")
				return
			}
			http.Redirect(w, r, "/console/sign-in", http.StatusSeeOther)
			return
		case sessionExpired, sessionForged:
			http.SetCookie(w, cookie(r, Prefix, sessionCookie, "", -1))
			c.fail(w, r, nil, http.StatusUnauthorized, "Your session has ended",
				"The session has expired or was signed out. Sign in again to continue."+nothingChanged(p.post))
			return
		}
		if p.post {
			if err := r.ParseMultipartForm(c.cfg.MaxUploadBytes); err != nil && !errors.Is(err, http.ErrNotMultipart) {
				c.fail(w, r, s, http.StatusBadRequest, "The form could not be read", err.Error()+" Nothing was changed.")
				return
			}
			if !csrfOK(r.PostFormValue("csrf"), s.csrf) {
				c.fail(w, r, s, http.StatusForbidden, "Form refused",
					"The form did not carry this session's form token, so it may not have come from this console. Nothing was changed. Go back, reload the page and try again.")
				return
			}
		}
		if p.rpc != "" && !c.cfg.Policy.Allowed(s.identity.Role, p.rpc) {
			c.fail(w, r, s, http.StatusForbidden, "Not allowed for your role",
				fmt.Sprintf("The role %q may not use this page (it is governed by %s).%s", s.identity.Role, p.rpc, nothingChanged(p.post)))
			return
		}
		p.h(w, r, &request{s: s, rpc: p.rpc})
	}
}

func nothingChanged(post bool) string {
	if post {
		return " Nothing was changed."
	}
	return ""
}

// ctx is the context of a call made for the signed-in identity.
func (c *Console) ctx(r *http.Request, rq *request, fullMethod string) context.Context {
	ctx := r.Context()
	if c.cfg.CallContext != nil {
		ctx = c.cfg.CallContext(ctx, rq.id(), fullMethod)
	}
	return ctx
}

// allowed tells whether the identity may call an RPC (to show or hide links and forms).
func (c *Console) allowed(rq *request, fullMethod string) bool {
	return rq != nil && rq.s != nil && c.cfg.Policy.Allowed(rq.s.identity.Role, fullMethod)
}

// Clients.
func (c *Console) catalogueClient() halovetv1.CatalogueServiceClient {
	return halovetv1.NewCatalogueServiceClient(c.cfg.Conn)
}
func (c *Console) licensingClient() halovetv1.LicensingServiceClient {
	return halovetv1.NewLicensingServiceClient(c.cfg.Conn)
}
func (c *Console) consumptionClient() halovetv1.ConsumptionServiceClient {
	return halovetv1.NewConsumptionServiceClient(c.cfg.Conn)
}
func (c *Console) shipmentClient() halovetv1.ShipmentServiceClient {
	return halovetv1.NewShipmentServiceClient(c.cfg.Conn)
}

// callFailed shows a failed call as a page: the call's own message, with the HTTP status
// of its code.
func (c *Console) callFailed(w http.ResponseWriter, r *http.Request, rq *request, what string, err error) {
	st := status.Convert(err)
	code := http.StatusBadGateway
	title := "The call failed"
	switch st.Code() {
	case codes.NotFound:
		code, title = http.StatusNotFound, "Not found"
	case codes.InvalidArgument, codes.FailedPrecondition, codes.OutOfRange:
		code, title = http.StatusBadRequest, "Not accepted"
	case codes.PermissionDenied, codes.Unauthenticated:
		code, title = http.StatusForbidden, "Not allowed"
	case codes.Unavailable, codes.DeadlineExceeded:
		code, title = http.StatusServiceUnavailable, "Service unavailable"
	}
	if code == http.StatusBadGateway {
		c.log.Warn("console call failed", "what", what, "err", err)
	}
	c.fail(w, r, sessionOf(rq), code, title, what+": "+st.Message())
}

func sessionOf(rq *request) *session {
	if rq == nil {
		return nil
	}
	return rq.s
}

// view is what every template gets.
type view struct {
	Title    string
	Session  *session
	Who      *Identity
	CSRF     string
	Nav      []navItem
	Path     string
	Refresh  int // seconds; 0: none
	Data     any
	Notice   string
	Cautions []string
}

type navItem struct {
	Href, Label string
	Current     bool
}

// Notice is the decision-support sentence every page ends with.
const Notice = "Results are decision support: the treaty text, national law, the national authority and licensed practice prevail."

func (c *Console) nav(s *session, path string) []navItem {
	if s == nil {
		return nil
	}
	items := []struct{ href, label, rpc string }{
		{"/console/", "Home", ""},
		{"/console/catalogue", "Catalogue", rpcResolve},
		{"/console/licences", "Licences", rpcListLicences},
		{"/console/batches", "Batches", rpcCheckBatch},
		{"/console/shipments", "Shipments", rpcListShipments},
		{"/console/year", "The year", rpcAssess},
		{"/console/audit", "Audit log", rpcAuditList},
	}
	var out []navItem
	for _, it := range items {
		if it.rpc != "" && !c.cfg.Policy.Allowed(s.identity.Role, it.rpc) {
			continue
		}
		cur := path == it.href || (it.href != "/console/" && strings.HasPrefix(path, it.href))
		out = append(out, navItem{Href: it.href, Label: it.label, Current: cur})
	}
	return out
}

// render writes a page.
func (c *Console) render(w http.ResponseWriter, r *http.Request, s *session, code int, name, title string, data any, tweak ...func(*view)) {
	t := c.pages[name]
	if t == nil {
		http.Error(w, "console: no template "+name, http.StatusInternalServerError)
		return
	}
	v := view{Title: title, Session: s, Nav: c.nav(s, r.URL.Path), Path: r.URL.Path, Data: data, Notice: Notice}
	if s != nil {
		v.CSRF = s.csrf
		id := s.identity
		v.Who = &id
	}
	for _, f := range tweak {
		f(&v)
	}
	var b bytes.Buffer
	if err := t.ExecuteTemplate(&b, "layout", v); err != nil {
		c.log.Error("console template", "page", name, "err", err)
		http.Error(w, "the page could not be drawn", http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(code)
	_, _ = w.Write(b.Bytes())
}

// problem is the data of a refusal or failure page.
type problem struct{ Heading, Message string }

// fail writes a page that says what went wrong.
func (c *Console) fail(w http.ResponseWriter, r *http.Request, s *session, code int, heading, msg string) {
	c.render(w, r, s, code, "problem", heading, problem{Heading: heading, Message: msg})
}

func (c *Console) parseTemplates() error {
	funcs := template.FuncMap{
		"figure":           figure,
		"dec":              dec,
		"amount":           amount,
		"cunit":            wireterms.ControlUnitText,
		"schedule":         wireterms.ControlScheduleText,
		"reportState":      wireterms.ReportStateText,
		"basis":            basisWord,
		"fine":             fine,
		"percent":          percent,
		"quota":            quota,
		"shareUsed":        shareUsed,
		"lower":            strings.ToLower,
		"join":             strings.Join,
		"status":           statusWord,
		"unit":             unitWord,
		"dirs":             directionWords,
		"purposes":         purposeWords,
		"entry":            entryPath,
		"compliance":       outcomeWord,
		"kind":             kindWord,
		"match":            matchWord,
		"pathesc":          url.PathEscape,
		"componentAt":      componentAt,
		"complianceClass":  outcomeClass,
		"shipState":        shipmentStateWord,
		"verdict":          verdictWord,
		"severity":         severityWord,
		"stamp":            stamp,
		"eventKind":        eventKindWord,
		"reportTrade":      reportTrade,
		"reportQuantities": reportQuantities,
		"exemptedUse":      exemptedUseWord,
		"dir":              func(d halovetv1.Direction) string { return directionWords([]halovetv1.Direction{d}) },
		"gwpSet":           wireterms.GWPSetWord,
		"convention":       wireterms.GWPConventionWord,
		"hsEdition":        wireterms.HSEditionWord,
		"blendType":        wireterms.BlendTypeWord,
	}
	base, err := template.New("layout").Funcs(funcs).ParseFS(templateFS, "templates/layout.html")
	if err != nil {
		return fmt.Errorf("console templates: %w", err)
	}
	names, err := fs.Glob(templateFS, "templates/*.html")
	if err != nil {
		return err
	}
	c.pages = map[string]*template.Template{}
	for _, n := range names {
		short := strings.TrimSuffix(strings.TrimPrefix(n, "templates/"), ".html")
		if short == "layout" {
			continue
		}
		t, err := template.Must(base.Clone()).ParseFS(templateFS, n)
		if err != nil {
			return fmt.Errorf("console template %s: %w", n, err)
		}
		c.pages[short] = t
	}
	return nil
}
