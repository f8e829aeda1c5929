package ledger

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"slices"
	"sync"
	"sync/atomic"
	"time"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

// Party is one country's settings as the register holds them.
type Party struct {
	Code      string // ISO 3166-1 alpha-2, upper case
	Settings  validate.PartySettings
	Reporting bool // the Party running halovet
}

// Register reads the parts of the register the checks need.
type Register interface {
	// Parties returns every country's settings.
	Parties(ctx context.Context) ([]Party, error)
	// Licences returns those of the numbered licences that exist, with their quota lines
	// and the amounts drawn on them; every licence when numbers is nil.
	Licences(ctx context.Context, numbers []string) ([]validate.Licence, error)
}

// Change says what the register announced as changed.
type Change struct {
	// All: anything may have changed (an announcement not understood, or announcements
	// missed while nobody listened).
	All bool
	// Parties: some country's settings.
	Parties bool
	// Licences: these licences, their terms, status, quota lines or amounts drawn.
	Licences []string
}

func (c Change) empty() bool { return !c.All && !c.Parties && len(c.Licences) == 0 }

// maxListedLicences is how many changed licences a pending change lists before it turns
// into a reload of every licence (a bulk load announces each licence it writes).
const maxListedLicences = 500

// merge adds d to c.
func (c Change) merge(d Change) Change {
	c.All = c.All || d.All
	c.Parties = c.Parties || d.Parties
	for _, n := range d.Licences {
		if !slices.Contains(c.Licences, n) {
			c.Licences = append(c.Licences, n)
		}
	}
	if c.All || len(c.Licences) > maxListedLicences {
		c.All, c.Licences = true, nil
	}
	return c
}

// Notifier announces changes of the register.
type Notifier interface {
	// Listen calls ready each time it has started listening, then changed for every change
	// announced after that, until ctx is done or it can listen no longer; it returns why
	// it stopped. Listen is called again after it returns.
	Listen(ctx context.Context, ready func(), changed func(Change)) error
}

// ErrNotConfigured is wrapped by the errors that say why no check can run on the register
// as it stands (no reporting Party, or one whose settings the rules cannot use). It
// clears by itself once the register is set up: the environment is rebuilt on the change.
var ErrNotConfigured = errors.New("the register is not set up for checks")

// Options configure an EnvHolder.
type Options struct {
	// Catalogue returns the current catalogue snapshot; required. A new snapshot (another
	// pointer) rebuilds the environment's catalogue indexes on the next Current.
	Catalogue func() *substances.Catalogue
	// Now is the checks' clock; nil means time.Now.
	Now func() time.Time
	// Rulebook gives the reporting Party's allowed levels; nil means the embedded one.
	Rulebook *controls.Rulebook
	// Logger receives reload failures; nil means slog.Default().
	Logger *slog.Logger
	// RetryDelay is how long Watch waits before it listens again after a lost connection,
	// and before it retries a failed reload; 0 means 2 s.
	RetryDelay time.Duration
}

// EnvHolder holds the current check environment. Current returns it without reading the
// register; a change announced by the register (Watch) or made through this process
// (Refresh) builds a new one from what changed and swaps it in whole, so a check never
// sees half of a change, and each check sees the register as it stood at its last
// announced change.
//
// What the environment holds and why: parties and licence terms change rarely; quota
// balances change with every recorded shipment. Both are held, balances included, and a
// recorded draw is announced like any other licence change (the register announces each
// licence whose quota lines change), so a check judges a record against the balance left
// after the last announced draw. Recording never relies on that balance: the store draws
// quota under row locks and turns down a record the balance no longer covers, so a
// balance read a moment early can only let a check pass a record the recorder then turns
// down, never count a draw twice.
type EnvHolder struct {
	reg  Register
	opts Options
	log  *slog.Logger

	mu  sync.Mutex // serialises rebuilds
	cur atomic.Pointer[snapshot]

	pendingMu sync.Mutex
	pending   Change        // announced, not yet applied
	wake      chan struct{} // signalled when pending grows
}

// snapshot is one immutable state of the environment.
type snapshot struct {
	cat      *substances.Catalogue
	parties  []Party
	licences map[string]*validate.Licence
	allowed  func(substances.Group, int) (float64, bool)
	env      *validate.Env // nil when err is set
	err      error
}

// NewEnvHolder returns a holder over reg; the first Current builds the environment.
func NewEnvHolder(reg Register, opts Options) *EnvHolder {
	if opts.Catalogue == nil {
		panic("ledger.NewEnvHolder: Options.Catalogue is nil")
	}
	if opts.Now == nil {
		opts.Now = time.Now
	}
	if opts.Logger == nil {
		opts.Logger = slog.Default()
	}
	if opts.RetryDelay <= 0 {
		opts.RetryDelay = 2 * time.Second
	}
	return &EnvHolder{reg: reg, opts: opts, log: opts.Logger, wake: make(chan struct{}, 1)}
}

// Current returns the environment to judge a record against now. It is shared and
// read-only. The error wraps ErrNotConfigured when the register cannot be checked
// against as it stands, or is the register's error when the environment was never built.
func (h *EnvHolder) Current(ctx context.Context) (*validate.Env, error) {
	s := h.cur.Load()
	if s == nil || s.cat != h.opts.Catalogue() {
		var err error
		if s, err = h.rebuild(ctx, Change{}); err != nil {
			return nil, err
		}
	}
	return s.env, s.err
}

// Refresh applies a change made through this process at once, so that the next check
// here sees it without waiting for the register's announcement. It returns the
// register's error; the environment is then left as it was.
func (h *EnvHolder) Refresh(ctx context.Context, c Change) error {
	if c.empty() {
		return nil
	}
	_, err := h.rebuild(ctx, c)
	return err
}

// Announce queues a change for Watch's reloader; it never blocks.
func (h *EnvHolder) Announce(c Change) {
	if c.empty() {
		return
	}
	h.pendingMu.Lock()
	h.pending = h.pending.merge(c)
	h.pendingMu.Unlock()
	select {
	case h.wake <- struct{}{}:
	default:
	}
}

func (h *EnvHolder) takePending() Change {
	h.pendingMu.Lock()
	defer h.pendingMu.Unlock()
	c := h.pending
	h.pending = Change{}
	return c
}

// Watch applies the changes n announces until the returned stop function is called or
// ctx is done. Each time n starts listening, the first time and after every lost
// connection, the whole environment is reloaded: changes announced while nobody listened
// are not missed. Changes that arrive while a reload runs are applied together after it.
func (h *EnvHolder) Watch(ctx context.Context, n Notifier) (stop func()) {
	ctx, cancel := context.WithCancel(ctx)
	var wg sync.WaitGroup
	wg.Add(2)
	go func() { // listen
		defer wg.Done()
		for ctx.Err() == nil {
			err := n.Listen(ctx, func() { h.Announce(Change{All: true}) }, h.Announce)
			if ctx.Err() != nil {
				return
			}
			h.log.Warn("register change listener stopped; listening again", "err", err, "after", h.opts.RetryDelay.String())
			select {
			case <-ctx.Done():
			case <-time.After(h.opts.RetryDelay):
			}
		}
	}()
	go func() { // reload
		defer wg.Done()
		for {
			select {
			case <-ctx.Done():
				return
			case <-h.wake:
			}
			c := h.takePending()
			if c.empty() {
				continue
			}
			if _, err := h.rebuild(ctx, c); err != nil {
				if ctx.Err() != nil {
					return
				}
				h.log.Error("check environment reload failed; keeping the previous one and retrying", "err", err, "after", h.opts.RetryDelay.String())
				select {
				case <-ctx.Done():
					return
				case <-time.After(h.opts.RetryDelay):
				}
				h.Announce(c)
			}
		}
	}()
	return func() { cancel(); wg.Wait() }
}

// rebuild applies c to the current snapshot (everything is read when there is none) and
// swaps the result in. An empty c only follows a new catalogue snapshot.
func (h *EnvHolder) rebuild(ctx context.Context, c Change) (*snapshot, error) {
	h.mu.Lock()
	defer h.mu.Unlock()
	old := h.cur.Load()
	cat := h.opts.Catalogue()
	if old == nil {
		c = Change{All: true}
	} else if c.empty() && old.cat == cat {
		return old, nil // another caller rebuilt it meanwhile
	}
	next := &snapshot{cat: cat}
	if old != nil {
		next.parties, next.licences, next.allowed = old.parties, old.licences, old.allowed
	}
	if c.All || c.Parties {
		ps, err := h.reg.Parties(ctx)
		if err != nil {
			return nil, err
		}
		next.parties, next.allowed = ps, nil
	}
	switch {
	case c.All:
		ls, err := h.reg.Licences(ctx, nil)
		if err != nil {
			return nil, err
		}
		next.licences = make(map[string]*validate.Licence, len(ls))
		for i := range ls {
			next.licences[ls[i].Number] = &ls[i]
		}
	case len(c.Licences) > 0:
		ls, err := h.reg.Licences(ctx, c.Licences)
		if err != nil {
			return nil, err
		}
		m := make(map[string]*validate.Licence, len(next.licences)+len(ls))
		for n, l := range next.licences {
			m[n] = l
		}
		for _, n := range c.Licences {
			delete(m, n) // a licence no longer there is gone
		}
		for i := range ls {
			m[ls[i].Number] = &ls[i]
		}
		next.licences = m
	}
	var prevEnv *validate.Env
	if old != nil {
		prevEnv = old.env
	}
	h.assemble(next, prevEnv)
	h.cur.Store(next)
	return next, nil
}

// assemble builds s's environment from its parts, sharing prev's catalogue indexes when
// the catalogue is the same.
func (h *EnvHolder) assemble(s *snapshot, prev *validate.Env) {
	var reporting *Party
	parties := make(map[string]validate.PartySettings, len(s.parties))
	for i := range s.parties {
		p := &s.parties[i]
		parties[p.Code] = p.Settings
		if p.Reporting {
			reporting = p
		}
	}
	if reporting == nil {
		s.err = fmt.Errorf("%w: no reporting Party is configured: name the country running halovet with SetReportingParty ('halovet reporting-party CODE'), or load its party settings with reporting_party set into an empty register", ErrNotConfigured)
		return
	}
	if s.allowed == nil {
		cp, err := ControlsParty(reporting.Settings)
		if err != nil {
			s.err = fmt.Errorf("%w: the reporting Party %s %v", ErrNotConfigured, reporting.Code, err)
			return
		}
		rb := h.opts.Rulebook
		if rb == nil {
			rb = defaultRulebook()
		}
		s.allowed = allowedPercent(rb, cp)
	}
	lics := s.licences
	env := &validate.Env{
		Catalogue:      s.cat,
		ReportingParty: reporting.Code,
		Parties:        parties,
		Licence: func(n string) (*validate.Licence, bool) {
			l, ok := lics[n]
			return l, ok
		},
		AllowedPercent:      s.allowed,
		Now:                 h.opts.Now,
		FutureToleranceDays: validate.DefaultFutureToleranceDays,
	}
	if err := env.Validate(); err != nil {
		s.err = fmt.Errorf("%w: %v", ErrNotConfigured, err)
		return
	}
	env.ShareIndexes(prev)
	s.env = env
}

// ControlsParty gives a reporting Party's settings in the control schedules' terms (the
// same Party type and HFC group). The error says, in words that follow "the reporting Party
// XX", why the settings cannot be used.
func ControlsParty(p validate.PartySettings) (controls.Party, error) {
	switch p.Type {
	case terms.PartyTypeArticle5, terms.PartyTypeNonArticle5:
	case terms.PartyTypeUnspecified:
		return controls.Party{}, fmt.Errorf("has no Party type set; it must be an Article 5 or non-Article 5 Party")
	default:
		return controls.Party{}, fmt.Errorf("is set as %q; it must be an Article 5 or non-Article 5 Party", p.Type)
	}
	hfc := p.HFCGroup
	if !hfc.Valid() {
		hfc = terms.HFCGroupUnspecified
	}
	return controls.Party{Type: p.Type, HFC: hfc}, nil
}

var (
	rulebookOnce sync.Once
	rulebook     *controls.Rulebook
)

// defaultRulebook is the embedded control schedule data, parsed once.
func defaultRulebook() *controls.Rulebook {
	rulebookOnce.Do(func() {
		rb, err := controls.DefaultRulebook()
		if err != nil {
			panic("embedded control schedules do not parse: " + err.Error()) // caught by every test
		}
		rulebook = rb
	})
	return rulebook
}

type allowedKey struct {
	g    substances.Group
	year int
}

type allowedValue struct {
	pct   float64
	known bool
}

// allowedPercent answers the reporting Party's allowed level per group and year from the
// rulebook, remembering each answer: the rulebook scan would otherwise run for every
// record checked. Safe for concurrent use.
func allowedPercent(rb *controls.Rulebook, cp controls.Party) func(substances.Group, int) (float64, bool) {
	var cache sync.Map // allowedKey -> allowedValue
	return func(g substances.Group, year int) (float64, bool) {
		k := allowedKey{g, year}
		if v, ok := cache.Load(k); ok {
			a := v.(allowedValue)
			return a.pct, a.known
		}
		var v allowedValue
		if a, err := rb.Allowance(cp, controls.ScopeOf(g), year); err == nil {
			v = allowedValue{a.Percent(), true}
		}
		cache.Store(k, v)
		return v.pct, v.known
	}
}

// Narrowed returns an environment like env in which only the licences keep accepts can be
// found (the checks take any other for unknown), sharing env's catalogue indexes: for a
// caller who may see only some companies' licences. env itself is not changed.
func Narrowed(env *validate.Env, keep func(*validate.Licence) bool) *validate.Env {
	lookup := env.Licence
	n := &validate.Env{
		Catalogue:      env.Catalogue,
		ReportingParty: env.ReportingParty,
		Parties:        env.Parties,
		Licence: func(number string) (*validate.Licence, bool) {
			l, ok := lookup(number)
			if !ok || !keep(l) {
				return nil, false
			}
			return l, true
		},
		AllowedPercent:      env.AllowedPercent,
		Now:                 env.Now,
		FutureToleranceDays: env.FutureToleranceDays,
	}
	n.ShareIndexes(env)
	return n
}

// WithBalancesOf returns an environment like live whose licences carry the amounts drawn
// that before gives for them: the terms (status, scope, validity, directions, allocations)
// are live's, the balances opened's. A recording stream judges each record against the
// register as it stands, but against the balances as they stood when the stream opened:
// its own earlier records are committed as it goes, and counting them again from the
// live balance, or not, depending on when their announcement arrived, would make the same
// file give different verdicts. The store draws every record under a row lock whatever the
// check said, so no quota is overdrawn either way. A licence before does not know keeps
// live's balance. live is not changed. PinnedBalances makes a before for a stream.
func WithBalancesOf(live *validate.Env, before func(number string) (*validate.Licence, bool)) *validate.Env {
	lookup := live.Licence
	n := &validate.Env{
		Catalogue:      live.Catalogue,
		ReportingParty: live.ReportingParty,
		Parties:        live.Parties,
		Licence: func(number string) (*validate.Licence, bool) {
			l, ok := lookup(number)
			if !ok {
				return nil, false
			}
			old, had := before(number)
			if !had || old == l {
				return l, true
			}
			c := *l
			c.QuotaLines = make([]validate.QuotaLine, len(l.QuotaLines))
			for i, q := range l.QuotaLines {
				for _, o := range old.QuotaLines {
					if o.LineNumber == q.LineNumber {
						q.Drawn = o.Drawn
						break
					}
				}
				c.QuotaLines[i] = q
			}
			return &c, true
		},
		AllowedPercent:      live.AllowedPercent,
		Now:                 live.Now,
		FutureToleranceDays: live.FutureToleranceDays,
	}
	n.ShareIndexes(live)
	return n
}

// PinnedBalances remembers each licence as a stream first sees it: its lookup returns the
// licence as it was at that first sight, for WithBalancesOf. Safe for concurrent use.
type PinnedBalances struct {
	mu   sync.Mutex
	seen map[string]*validate.Licence
}

// Pin records l under number unless a licence is already recorded under it.
func (p *PinnedBalances) Pin(number string, l *validate.Licence) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.seen == nil {
		p.seen = map[string]*validate.Licence{}
	}
	if _, ok := p.seen[number]; !ok {
		p.seen[number] = l
	}
}

// Lookup returns the licence pinned under number.
func (p *PinnedBalances) Lookup(number string) (*validate.Licence, bool) {
	p.mu.Lock()
	defer p.mu.Unlock()
	l, ok := p.seen[number]
	return l, ok
}

// View returns live with the balances pinned so far, pinning first every licence of
// numbers that live holds and that is not pinned yet.
func (p *PinnedBalances) View(live *validate.Env, numbers ...string) *validate.Env {
	for _, n := range numbers {
		if l, ok := live.Licence(n); ok {
			p.Pin(n, l)
		}
	}
	return WithBalancesOf(live, p.Lookup)
}
