package console

import (
	"context"
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base64"
	"errors"
	"net/http"
	"strings"
	"sync"
	"time"
)

// Identity is who signed in: the credential, a name to show, a role the policy knows, and
// for a trader's credential the company it acts for ("" for the authority's staff).
type Identity struct {
	CredentialID string
	Name         string
	Role         string
	Company      string
	// Secret is the secret the identity signed in with. It stays in the server's memory
	// with the session, never goes to the browser, and is what the console's calls carry
	// (BearerCallContext), so that the server judges each call for the signed-in identity.
	Secret string
}

// Authenticator checks a secret (a credential's token) and says whose it is. It returns
// ErrBadCredentials (or an error wrapping it) when the secret is not a valid credential.
type Authenticator interface {
	Authenticate(ctx context.Context, secret string) (Identity, error)
}

// Policy says whether a role may call an RPC (its full method name,
// "/halovet.v1.LicensingService/GetLicence"). The console asks it for every page and
// form, with the RPC the page is mapped to.
type Policy interface {
	Allowed(role, fullMethod string) bool
}

// ErrBadCredentials is the Authenticator's answer to a secret that is not valid.
var ErrBadCredentials = errors.New("the secret is not a valid credential")

// Cookie names.
const (
	sessionCookie = "halovet_console_session"
	signInCookie  = "halovet_console_signin" // the sign-in form's CSRF token, before a session exists
)

// session is one signed-in browser.
type session struct {
	id       string
	identity Identity
	csrf     string
	created  time.Time
	lastSeen time.Time
}

// sessions keeps the sessions in memory: they end with the process (a restart signs
// everyone out), and are not shared between replicas (route a browser to one replica).
type sessions struct {
	mu      sync.Mutex
	key     []byte
	byID    map[string]*session
	idle    time.Duration
	maxAge  time.Duration
	now     func() time.Time
	maxKept int
}

func newSessions(key []byte, idle, maxAge time.Duration, now func() time.Time) *sessions {
	return &sessions{key: key, byID: map[string]*session{}, idle: idle, maxAge: maxAge, now: now, maxKept: 10000}
}

func randomToken() string {
	b := make([]byte, 32)
	if _, err := rand.Read(b); err != nil {
		panic("console: no randomness: " + err.Error()) // crypto/rand does not fail on supported systems
	}
	return base64.RawURLEncoding.EncodeToString(b)
}

// sign returns value.MAC, the MAC keyed with the sessions' key.
func (s *sessions) sign(value string) string {
	m := hmac.New(sha256.New, s.key)
	m.Write([]byte(value))
	return value + "." + base64.RawURLEncoding.EncodeToString(m.Sum(nil))
}

// verify returns the value of a signed string, or false when its MAC does not match.
func (s *sessions) verify(signed string) (string, bool) {
	value, mac, ok := strings.Cut(signed, ".")
	if !ok {
		return "", false
	}
	want := s.sign(value)
	return value, subtle.ConstantTimeCompare([]byte(want), []byte(value+"."+mac)) == 1
}

// start opens a session for id.
func (s *sessions) start(id Identity) *session {
	s.mu.Lock()
	defer s.mu.Unlock()
	now := s.now()
	s.sweepLocked(now)
	ss := &session{id: randomToken(), identity: id, csrf: randomToken(), created: now, lastSeen: now}
	s.byID[ss.id] = ss
	return ss
}

// sessionState is what a request's cookie says.
type sessionState int

const (
	sessionNone    sessionState = iota // no cookie
	sessionValid                       // a live session
	sessionExpired                     // a cookie whose session has ended (idle, too old, signed out, restarted)
	sessionForged                      // a cookie whose signature does not match
)

// lookup finds the session of a request and marks it seen.
func (s *sessions) lookup(r *http.Request) (*session, sessionState) {
	c, err := r.Cookie(sessionCookie)
	if err != nil || c.Value == "" {
		return nil, sessionNone
	}
	id, ok := s.verify(c.Value)
	if !ok {
		return nil, sessionForged
	}
	s.mu.Lock()
	defer s.mu.Unlock()
	ss := s.byID[id]
	now := s.now()
	if ss == nil {
		return nil, sessionExpired
	}
	if now.Sub(ss.lastSeen) > s.idle || now.Sub(ss.created) > s.maxAge {
		delete(s.byID, id)
		return nil, sessionExpired
	}
	ss.lastSeen = now
	return ss, sessionValid
}

// end removes a session.
func (s *sessions) end(ss *session) {
	s.mu.Lock()
	defer s.mu.Unlock()
	delete(s.byID, ss.id)
}

// sweepLocked drops ended sessions, and the oldest when too many are kept.
func (s *sessions) sweepLocked(now time.Time) {
	for id, ss := range s.byID {
		if now.Sub(ss.lastSeen) > s.idle || now.Sub(ss.created) > s.maxAge {
			delete(s.byID, id)
		}
	}
	for len(s.byID) >= s.maxKept {
		var oldest *session
		for _, ss := range s.byID {
			if oldest == nil || ss.lastSeen.Before(oldest.lastSeen) {
				oldest = ss
			}
		}
		delete(s.byID, oldest.id)
	}
}

// cookie builds one of the console's cookies: HttpOnly, SameSite=Strict, Secure when the
// request came over TLS, limited to the console's path.
func cookie(r *http.Request, path, name, value string, maxAge int) *http.Cookie {
	return &http.Cookie{Name: name, Value: value, Path: path, HttpOnly: true, Secure: r.TLS != nil,
		SameSite: http.SameSiteStrictMode, MaxAge: maxAge}
}

// csrfOK compares a form's token with the expected one in constant time.
func csrfOK(got, want string) bool {
	return got != "" && want != "" && subtle.ConstantTimeCompare([]byte(got), []byte(want)) == 1
}
