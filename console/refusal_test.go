package console_test

import (
	"net/http"
	"net/url"
	"os"
	"strings"
	"testing"
	"time"

	"google.golang.org/protobuf/reflect/protoreflect"
	"google.golang.org/protobuf/reflect/protoregistry"

	"github.com/halovet/halovet/console"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Refusals: each is a page that says what happened, and nothing changes.

func TestFormWithoutTokenIsRefused(t *testing.T) {
	h := newHarness(t, false)
	c := h.client(t)
	c.signIn("officer")
	for name, form := range map[string]url.Values{
		"no token":    {"status": {"suspended"}, "reason": {"forged"}},
		"wrong token": {"csrf": {"AAAA"}, "status": {"suspended"}, "reason": {"forged"}},
	} {
		p := c.post("/console/licences/XA-IMP-2026-001/status", form)
		if p.code != http.StatusForbidden || !strings.Contains(p.body, "Form refused") || !strings.Contains(p.body, "Nothing was changed") {
			t.Errorf("%s: %d\n%s", name, p.code, p.body)
		}
	}
	if st := licenceStatus(t, h, "XA-IMP-2026-001"); st != halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE {
		t.Errorf("the licence is %v after refused forms; want it active still", st)
	}
	// Signing in needs the sign-in form's own token too.
	c2 := h.client(t)
	if p := c2.post("/console/sign-in", url.Values{"secret": {h.secrets["officer"]}}); p.code != http.StatusForbidden || strings.Contains(p.body, "Sign out") {
		t.Errorf("sign-in without its token: %d", p.code)
	}
}

func TestExpiredSessionIsRefused(t *testing.T) {
	h := newHarness(t, false)
	c := h.client(t)
	c.signIn("officer")
	form := c.get("/console/licences/XA-IMP-2026-001")
	tok := form.csrf(t)
	h.clock.advance(31 * time.Minute) // past the 30-minute idle limit
	p := c.post("/console/licences/XA-IMP-2026-001/status", url.Values{"csrf": {tok}, "status": {"suspended"}, "reason": {"late"}})
	if p.code != http.StatusUnauthorized || !strings.Contains(p.body, "Your session has ended") || !strings.Contains(p.body, "Nothing was changed") {
		t.Errorf("a form after the session expired: %d\n%s", p.code, p.body)
	}
	if st := licenceStatus(t, h, "XA-IMP-2026-001"); st != halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE {
		t.Errorf("the licence is %v after an expired session's form; want it active still", st)
	}
	// The cookie is cleared: the next page asks to sign in.
	if p := c.get("/console/licences"); !strings.Contains(p.body, `name="secret"`) {
		t.Errorf("after expiry: %d, want the sign-in page", p.code)
	}
	// A session in use stays open past the idle limit, but not past the maximum age.
	c.signIn("officer")
	for range 17 { // 17 × 29 min > 8 h
		h.clock.advance(29 * time.Minute)
		p = c.get("/console/")
	}
	if p.code != http.StatusUnauthorized || !strings.Contains(p.body, "Your session has ended") {
		t.Errorf("a session older than 8 h: %d", p.code)
	}
}

func TestPageOutsideTheRoleIsRefused(t *testing.T) {
	h := newHarness(t, false)
	reader := h.client(t)
	reader.signIn("reader")
	for _, path := range []string{"/console/licences", "/console/licences/XA-IMP-2026-001", "/console/batches", "/console/year", "/console/year/chart.svg"} {
		p := reader.get(path)
		if p.code != http.StatusForbidden || !strings.Contains(p.body, "Not allowed for your role") {
			t.Errorf("reader GET %s: %d", path, p.code)
		}
	}
	if p := reader.get("/console/audit"); p.code != http.StatusForbidden {
		t.Errorf("reader GET /console/audit: %d", p.code)
	}
	// The reader's navigation offers the catalogue only.
	home := reader.get("/console/")
	if strings.Contains(home.body, `href="/console/licences"`) || !strings.Contains(home.body, `href="/console/catalogue"`) {
		t.Errorf("the reader's home page offers pages outside the role")
	}
	// The auditor reads the register but may not change it: no form, and a forged post
	// with the auditor's own token is refused.
	aud := h.client(t)
	aud.signIn("auditor")
	p := aud.get("/console/licences/XA-IMP-2026-001")
	if p.code != 200 || strings.Contains(p.body, "Suspend the licence") || strings.Contains(p.body, "Amend the allocation") {
		t.Errorf("auditor's licence page: %d, suspend form shown %v", p.code, strings.Contains(p.body, "Suspend the licence"))
	}
	p = aud.post("/console/licences/XA-IMP-2026-001/status", url.Values{"csrf": {p.csrf(t)}, "status": {"suspended"}, "reason": {"not mine to do"}})
	if p.code != http.StatusForbidden || !strings.Contains(p.body, "SetLicenceStatus") || !strings.Contains(p.body, "Nothing was changed") {
		t.Errorf("auditor's status post: %d\n%s", p.code, p.body)
	}
	if st := licenceStatus(t, h, "XA-IMP-2026-001"); st != halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE {
		t.Errorf("the licence is %v after the auditor's refused post", st)
	}
	// The auditor reads the audit log: the demo's licences were loaded through the API,
	// so they are in it, and the hash chain checks out.
	p = aud.get("/console/audit?object_type=licence&object_key=XA-IMP-2026-001")
	if p.code != http.StatusOK || !strings.Contains(p.body, "XA-IMP-2026-001") || strings.Contains(p.body, "No audit event matches") {
		t.Errorf("auditor's audit log: %d\n%s", p.code, p.body)
	}
	p = aud.get("/console/audit?verify=1")
	if !strings.Contains(p.body, "is intact") {
		t.Errorf("audit chain check: %d\n%s", p.code, p.body)
	}
}

func TestTraderSeesOnlyItsCompany(t *testing.T) {
	h := newHarness(t, false)
	c := h.client(t)
	c.signIn("trader")
	// scenario.json: XA-IMP-2026-002 belongs to XA-1002, XA-IMP-2026-001 to XA-1001.
	p := c.get("/console/licences?company=XA-1001")
	if !strings.Contains(p.body, "XA-IMP-2026-002") || strings.Contains(p.body, "XA-IMP-2026-001") || strings.Contains(p.body, ">XA-1001<") {
		t.Errorf("the trader's register shows other companies:\n%s", p.body)
	}
	if p := c.get("/console/licences/XA-IMP-2026-001"); (p.code != http.StatusNotFound && p.code != http.StatusForbidden) || strings.Contains(p.body, "Quota lines") {
		t.Errorf("another company's licence: %d", p.code)
	}
	if p := c.get("/console/licences/XA-IMP-2026-002"); p.code != http.StatusOK {
		t.Errorf("its own licence: %d", p.code)
	}
}

func TestSecurityHeadersAndCookies(t *testing.T) {
	for _, tls := range []bool{false, true} {
		h := newHarness(t, tls)
		c := h.client(t)
		p := c.get("/console/sign-in")
		csp := p.hdr.Get("Content-Security-Policy")
		for _, want := range []string{"default-src 'none'", "style-src 'self'", "form-action 'self'", "frame-ancestors 'none'"} {
			if !strings.Contains(csp, want) {
				t.Errorf("CSP %q lacks %q", csp, want)
			}
		}
		if strings.Contains(csp, "script-src") || strings.Contains(csp, "unsafe-inline") {
			t.Errorf("CSP %q allows script or inline code", csp)
		}
		for k, v := range map[string]string{"X-Content-Type-Options": "nosniff", "X-Frame-Options": "DENY", "Referrer-Policy": "no-referrer", "Cache-Control": "no-store"} {
			if p.hdr.Get(k) != v {
				t.Errorf("%s: %q, want %q", k, p.hdr.Get(k), v)
			}
		}
		if got := p.hdr.Get("Strict-Transport-Security") != ""; got != tls {
			t.Errorf("TLS %v: HSTS set %v", tls, got)
		}
		if strings.Contains(p.body, "<script") || strings.Contains(p.body, " style=") {
			t.Errorf("the page has script or inline style")
		}
		resp, err := c.http.PostForm(h.url+"/console/sign-in", url.Values{"csrf": {p.csrf(t)}, "secret": {h.secrets["officer"]}})
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		var found bool
		for _, ck := range resp.Request.Response.Cookies() {
			if ck.Name != "halovet_console_session" {
				continue
			}
			found = true
			if !ck.HttpOnly || ck.SameSite != http.SameSiteStrictMode || ck.Secure != tls || ck.Path != console.Prefix {
				t.Errorf("TLS %v: session cookie %+v; want HttpOnly, SameSite=Strict, Secure over TLS only, Path /console/", tls, ck)
			}
			if strings.Contains(ck.Value, h.secrets["officer"]) {
				t.Error("the session cookie carries the secret")
			}
		}
		if !found {
			t.Errorf("TLS %v: no session cookie set at sign-in", tls)
		}
	}
}

// TestEveryPageIsMapped: every page that shows or changes data names an RPC the API
// has, and a page whose RPC the role lacks is refused (the table is the one the guard
// uses).
func TestEveryPageIsMapped(t *testing.T) {
	pages := console.Pages()
	if len(pages) < 10 {
		t.Fatalf("%d pages", len(pages))
	}
	for _, p := range pages {
		if p.RPC == "" {
			if p.Pattern != "GET /console/{$}" && p.Pattern != "POST /console/sign-out" {
				t.Errorf("%s is mapped to no RPC", p.Pattern)
			}
			continue
		}
		svc, method, _ := strings.Cut(strings.TrimPrefix(p.RPC, "/"), "/")
		d, err := protoregistry.GlobalFiles.FindDescriptorByName(protoreflect.FullName(svc))
		if err != nil {
			t.Errorf("%s: service of %s: %v", p.Pattern, p.RPC, err)
			continue
		}
		if d.(protoreflect.ServiceDescriptor).Methods().ByName(protoreflect.Name(method)) == nil {
			t.Errorf("%s: no method %s", p.Pattern, p.RPC)
		}
		if strings.HasPrefix(p.Pattern, "POST") != p.Post {
			t.Errorf("%s: post %v", p.Pattern, p.Post)
		}
	}
}

// TestREADMEListsEveryPage holds the README's page table to the console's.
func TestREADMEListsEveryPage(t *testing.T) {
	raw, err := os.ReadFile(repoFile(t, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	readme := string(raw)
	for _, p := range console.Pages() {
		pattern := strings.ReplaceAll(p.Pattern, "{$}", "")
		rpc := "(signed in)"
		if p.RPC != "" {
			rpc = "`" + strings.TrimPrefix(p.RPC, "/halovet.v1.") + "`"
		}
		if row := "| `" + pattern + "` | " + rpc + " |"; !strings.Contains(readme, row) {
			t.Errorf("README lacks the row %s", row)
		}
	}
}
