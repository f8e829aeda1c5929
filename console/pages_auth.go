package console

import (
	"errors"
	"net/http"
	"strings"
)

type signInData struct {
	Token   string
	Message string
}

// signInForm shows the sign-in page with a fresh form token, kept in a cookie of its own
// (there is no session yet to keep it in).
func (c *Console) signInForm(w http.ResponseWriter, r *http.Request) {
	c.signInPage(w, r, http.StatusOK, "")
}

func (c *Console) signInPage(w http.ResponseWriter, r *http.Request, code int, msg string) {
	tok := randomToken()
	http.SetCookie(w, cookie(r, Prefix, signInCookie, c.sessions.sign(tok), 600))
	c.render(w, r, nil, code, "signin", "Sign in", signInData{Token: tok, Message: msg})
}

// signIn checks the form token and the secret, and opens a session.
func (c *Console) signIn(w http.ResponseWriter, r *http.Request) {
	r.Body = http.MaxBytesReader(w, r.Body, 16<<10)
	if err := r.ParseForm(); err != nil {
		c.fail(w, r, nil, http.StatusBadRequest, "The form could not be read", err.Error())
		return
	}
	ck, err := r.Cookie(signInCookie)
	var want string
	if err == nil {
		want, _ = c.sessions.verify(ck.Value)
	}
	if !csrfOK(r.PostFormValue("csrf"), want) {
		c.fail(w, r, nil, http.StatusForbidden, "Form refused",
			"The sign-in form did not carry its form token (or it is older than ten minutes). Nobody was signed in. Open the sign-in page again.")
		return
	}
	secret := strings.TrimSpace(r.PostFormValue("secret"))
	if secret == "" {
		c.signInPage(w, r, http.StatusBadRequest, "Enter your access token: the secret your credential was issued with.")
		return
	}
	id, err := c.cfg.Auth.Authenticate(r.Context(), secret)
	if err != nil {
		if !errors.Is(err, ErrBadCredentials) {
			c.log.Warn("console sign-in failed", "err", err)
		}
		c.signInPage(w, r, http.StatusUnauthorized, "That access token is not valid (unknown, revoked or expired). Check it and try again.")
		return
	}
	id.Secret = secret
	s := c.sessions.start(id)
	http.SetCookie(w, cookie(r, Prefix, signInCookie, "", -1))
	http.SetCookie(w, cookie(r, Prefix, sessionCookie, c.sessions.sign(s.id), 0))
	c.log.Info("console sign-in", "credential", id.CredentialID, "role", id.Role)
	http.Redirect(w, r, Prefix, http.StatusSeeOther)
}

func (c *Console) signOut(w http.ResponseWriter, r *http.Request, rq *request) {
	c.sessions.end(rq.s)
	http.SetCookie(w, cookie(r, Prefix, sessionCookie, "", -1))
	c.render(w, r, nil, http.StatusOK, "signedout", "Signed out", nil)
}

type homeData struct {
	Links []homeLink
}

type homeLink struct{ Href, Label, About string }

func (c *Console) home(w http.ResponseWriter, r *http.Request, rq *request) {
	all := []struct {
		href, label, about, rpc string
	}{
		{"/console/catalogue", "Catalogue", "Find a substance or blend: ODP, GWPs, Annex group, identifiers, HS codes, safety class and cautions.", rpcResolve},
		{"/console/licences", "Licence register", "Licences and their quota lines: allocated, drawn, remaining and the share used.", rpcListLicences},
		{"/console/batches", "Shipment batches", "Upload a CSV or JSON Lines file of shipment records, see each verdict, download the report and record the batch.", rpcCheckBatch},
		{"/console/shipments", "Recorded shipments", "Search the recorded shipments, open one with the verdict it was recorded with, its quota draws and versions, and void it where your role may.", rpcListShipments},
		{"/console/year", "The year", "Consumption, the baseline and compliance with the control schedule, with the chart.", rpcAssess},
	}
	var d homeData
	for _, l := range all {
		if c.allowed(rq, l.rpc) {
			d.Links = append(d.Links, homeLink{l.href, l.label, l.about})
		}
	}
	c.render(w, r, rq.s, http.StatusOK, "home", "halovet console", d)
}

// PageInfo is one row of the page table: the route, the RPC whose policy it obeys ("" for
// the home page and sign-out, open to every signed-in identity) and whether it is a form
// post (CSRF-checked). README's console section lists the table.
type PageInfo struct {
	Pattern string
	RPC     string
	Post    bool
}

// Pages lists the console's pages.
func Pages() []PageInfo {
	var c Console
	var out []PageInfo
	for _, p := range c.pageTable() {
		out = append(out, PageInfo{Pattern: p.pattern, RPC: p.rpc, Post: p.post})
	}
	return out
}
