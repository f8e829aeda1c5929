package console_test

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/chromedp"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The browser test drives a real chromium (Debian's package, installed by
// scripts/ensure-chromium.sh when missing) through chromedp: one browser for the whole
// walk, which signs in, searches, uploads the demo batch, records it, watches a licence's
// balance move, signs out, and is refused where it should be. Every page it visits is
// checked for labelled controls and WCAG AA contrast, and photographed into docs/console/.

// chromiumPath finds chromium, installing it when missing; the test fails (never skips)
// when there is none.
func chromiumPath(t *testing.T) string {
	t.Helper()
	out, err := exec.Command("bash", repoFile(t, "scripts/ensure-chromium.sh")).CombinedOutput()
	if err != nil {
		t.Fatalf("scripts/ensure-chromium.sh: %v\n%s", err, out)
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	return lines[len(lines)-1]
}

type browser struct {
	t        *testing.T
	h        *harness
	ctx      context.Context
	mu       sync.Mutex
	messages []string
	shotDir  string
	shots    []string
	refused  map[string]bool // paths whose refusal the browser may log as a failed load
}

func newBrowser(t *testing.T, h *harness) *browser {
	t.Helper()
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(chromiumPath(t)),
		chromedp.NoSandbox, // the tests may run as root
		chromedp.WindowSize(1200, 860),
		chromedp.Flag("ignore-certificate-errors", true),
		chromedp.Flag("lang", "en-GB"),
	)
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancel := chromedp.NewContext(actx)
	t.Cleanup(func() { cancel(); cancelAlloc() })
	ctx, cancelT := context.WithTimeout(ctx, 5*time.Minute)
	t.Cleanup(cancelT)
	b := &browser{t: t, h: h, ctx: ctx, shotDir: repoDir(t, "docs/console"), refused: map[string]bool{}}
	if err := chromedp.Do(ctx, chromedp.Navigate("about:blank")); err != nil {
		t.Fatalf("start chromium: %v", err)
	}
	msgs := chromedp.Console(ctx)
	go func() {
		for m, err := range msgs {
			if err != nil {
				return
			}
			b.mu.Lock()
			b.messages = append(b.messages, fmt.Sprintf("%s %s:%d %s", m.Type, m.URL, m.Line+1, m.Text))
			b.mu.Unlock()
		}
	}()
	return b
}

func repoDir(t *testing.T, rel string) string {
	t.Helper()
	p := filepath.Join("..", rel)
	if err := os.MkdirAll(p, 0o755); err != nil {
		t.Fatal(err)
	}
	return p
}

func (b *browser) do(what string, steps ...chromedp.Action[chromedp.Void]) {
	b.t.Helper()
	if err := chromedp.Do(b.ctx, steps...); err != nil {
		b.t.Fatalf("%s: %v", what, err)
	}
}

func (b *browser) open(path string) {
	b.t.Helper()
	b.do("open "+path, chromedp.Navigate(b.h.url+path), chromedp.WaitReady("body"))
}

func (b *browser) text(sel string) string {
	b.t.Helper()
	// Read in one evaluation, retried while the element is not there: a page that reloads
	// (the batch page until its verdicts are in) can replace the document between finding
	// a node and reading it.
	js := fmt.Sprintf(`(() => { const e = document.querySelector(%q); return e ? [true, e.innerText] : [false, ""]; })()`, sel)
	deadline := time.Now().Add(10 * time.Second)
	for {
		v, err := chromedp.Run(b.ctx, chromedp.Evaluate[[]any](js))
		if err == nil && len(v) == 2 && v[0] == true {
			s, _ := v[1].(string)
			return strings.TrimSpace(s)
		}
		if time.Now().After(deadline) {
			b.t.Fatalf("text of %s: not on the page within 10s (last error %v)", sel, err)
		}
		time.Sleep(100 * time.Millisecond)
	}
}

func eval[T any](b *browser, js string) T {
	b.t.Helper()
	v, err := chromedp.Run(b.ctx, chromedp.Evaluate[T](js))
	if err != nil {
		b.t.Fatalf("evaluate %q: %v", js, err)
	}
	return v
}

func (b *browser) body() string { return eval[string](b, `document.body.innerText`) }

func (b *browser) mustShow(subs ...string) {
	b.t.Helper()
	body := b.body()
	for _, s := range subs {
		if !strings.Contains(body, s) {
			b.t.Errorf("%s: the page does not show %q", eval[string](b, `location.pathname`), s)
		}
	}
}

// maskJS puts placeholders in the place of what differs from run to run: the times the
// server stamps (elements time.stamp) and the credential ids it draws at random
// (elements .cred), so that the screenshots stay the same bytes when the pages do.
const maskJS = `(() => {
  document.querySelectorAll('time.stamp').forEach(e => { e.textContent = 'YYYY-MM-DD hh:mm:ss'; });
  document.querySelectorAll('.cred').forEach(e => { e.textContent = 'credential id'; });
  return true;
})()`

// shot checks the page's accessibility and photographs it as docs/console/NAME.png, its
// run-dependent times and ids masked (maskJS).
func (b *browser) shot(name, about string) {
	b.t.Helper()
	b.checkAccessible(name)
	eval[bool](b, maskJS)
	png, err := chromedp.Run(b.ctx, chromedp.CaptureScreenshot())
	if err != nil {
		b.t.Fatalf("screenshot %s: %v", name, err)
	}
	if err := os.WriteFile(filepath.Join(b.shotDir, name+".png"), png, 0o644); err != nil {
		b.t.Fatal(err)
	}
	b.shots = append(b.shots, fmt.Sprintf("| [%s](%s.png) | %s |", name, name, about))
}

// a11yJS lists the page's problems: a control without a label (an accessible name), and
// text whose contrast with its background is below WCAG 2.x AA (4.5:1, or 3:1 for large
// text: 24 px, or 18.66 px bold).
const a11yJS = `(() => {
  const problems = [];
  for (const el of document.querySelectorAll('input, select, textarea, button')) {
    if (el.type === 'hidden') continue;
    const named = (el.labels && el.labels.length > 0) || el.getAttribute('aria-label') || el.getAttribute('aria-labelledby') ||
      (el.tagName === 'BUTTON' && el.textContent.trim() !== '');
    if (!named) problems.push('unlabelled ' + el.tagName.toLowerCase() + (el.id ? '#' + el.id : '') + (el.name ? '[name=' + el.name + ']' : ''));
  }
  const rgb = s => { const m = s.match(/rgba?\(([^)]+)\)/); if (!m) return null; const p = m[1].split(',').map(Number); return {r: p[0], g: p[1], b: p[2], a: p.length > 3 ? p[3] : 1}; };
  const lum = c => { const f = v => { v /= 255; return v <= 0.03928 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4); }; return 0.2126 * f(c.r) + 0.7152 * f(c.g) + 0.0722 * f(c.b); };
  const bgOf = el => { for (let e = el; e; e = e.parentElement) { const c = rgb(getComputedStyle(e).backgroundColor); if (c && c.a > 0) return c; } return {r: 255, g: 255, b: 255, a: 1}; };
  const walker = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT);
  const seen = new Set();
  for (let n = walker.nextNode(); n; n = walker.nextNode()) {
    const el = n.parentElement;
    if (!el || seen.has(el) || n.textContent.trim() === '') continue;
    seen.add(el);
    const st = getComputedStyle(el);
    const r = el.getBoundingClientRect();
    if (st.visibility === 'hidden' || st.display === 'none' || r.width <= 1 || r.height <= 1) continue;
    const fg = rgb(st.color), bg = bgOf(el);
    if (!fg) continue;
    const l1 = lum(fg), l2 = lum(bg);
    const ratio = (Math.max(l1, l2) + 0.05) / (Math.min(l1, l2) + 0.05);
    const size = parseFloat(st.fontSize), bold = parseInt(st.fontWeight, 10) >= 700;
    const need = (size >= 24 || (bold && size >= 18.66)) ? 3 : 4.5;
    if (ratio < need) problems.push('contrast ' + ratio.toFixed(2) + ' < ' + need + ': "' + n.textContent.trim().slice(0, 40) + '"');
  }
  return problems;
})()`

func (b *browser) checkAccessible(name string) {
	b.t.Helper()
	for _, p := range eval[[]string](b, a11yJS) {
		b.t.Errorf("%s: %s", name, p)
	}
	if lang := eval[string](b, `document.documentElement.lang`); lang != "en" {
		b.t.Errorf("%s: html lang %q", name, lang)
	}
}

// waitFor polls a JavaScript condition through reloads (a batch page reloads itself).
func (b *browser) waitFor(what, js string, limit time.Duration) {
	b.t.Helper()
	deadline := time.Now().Add(limit)
	for {
		ok, err := chromedp.Run(b.ctx, chromedp.Evaluate[bool](js))
		if err == nil && ok {
			return
		}
		if time.Now().After(deadline) {
			body, _ := chromedp.Run(b.ctx, chromedp.Evaluate[string](`location.pathname + "\n" + document.body.innerText`))
			b.t.Fatalf("%s: not within %v (last error %v); the page:\n%s", what, limit, err, body)
		}
		time.Sleep(250 * time.Millisecond)
	}
}

// signIn signs in with the test credential of a role.
func (b *browser) signIn(role string) {
	b.t.Helper()
	secret := b.h.secrets[role]
	b.open("/console/sign-in")
	b.do("sign in", chromedp.SendKeys(chromedp.CSS("#secret"), secret), chromedp.Click(chromedp.CSS(`button[type="submit"]`)))
	b.waitFor("signed in", `!!document.querySelector('form.signout')`, 10*time.Second)
}

func (b *browser) signOut() {
	b.t.Helper()
	b.do("sign out", chromedp.Click(chromedp.CSS(`form.signout button`)))
	b.waitFor("signed out", `document.body.innerText.includes('You are signed out')`, 10*time.Second)
}

func TestBrowserWalk(t *testing.T) {
	h := newHarness(t, false)
	want := goldenCounts(t)
	b := newBrowser(t, h)

	// Sign-in by keyboard alone: Tab reaches the skip link first, then the token field and
	// the button, each with a visible focus ring; Enter submits.
	b.open("/console/sign-in")
	b.shot("01-sign-in", "Sign-in with an access token")
	var order []string
	for range 6 {
		b.do("tab", chromedp.KeyEvent("\t"))
		order = append(order, eval[string](b, `(document.activeElement.id || document.activeElement.className || document.activeElement.tagName) + ''`))
		if ring := eval[string](b, `getComputedStyle(document.activeElement).outlineStyle`); ring == "none" {
			t.Errorf("no focus ring on %s", order[len(order)-1])
		}
		if order[len(order)-1] == "secret" {
			break
		}
	}
	if order[0] != "skip" || order[len(order)-1] != "secret" {
		t.Fatalf("keyboard order %v: want the skip link first and the token field reached", order)
	}
	b.do("type the token", chromedp.KeyEvent(h.secrets["officer"]), chromedp.KeyEvent("\r"))
	b.waitFor("signed in by keyboard", `!!document.querySelector('form.signout')`, 10*time.Second)
	b.mustShow("Olu Officer (invented)", "Licence register")
	b.shot("02-home", "Home page of a signed-in officer")

	// Search a substance, with a near miss first.
	b.open("/console/catalogue?q=R410")
	b.mustShow("Did you mean", "R-410A")
	b.shot("03-catalogue-did-you-mean", "Catalogue search with \"did you mean\"")
	b.do("search", chromedp.Navigate(h.url+"/console/catalogue"), chromedp.SendKeys(chromedp.CSS("#q"), "R-32"), chromedp.Submit(chromedp.CSS("#q")))
	b.waitFor("results", `!!document.querySelector('table.results')`, 10*time.Second)
	b.shot("04-catalogue-results", "Catalogue search results")
	b.do("open the entry", chromedp.Click(chromedp.CSS(`table.results a`)))
	b.waitFor("entry page", `!!document.querySelector('#safety-class')`, 10*time.Second)
	// ASHRAE 34: HFC-32 is class A2L.
	b.mustShow("HFC-32", "A2L", "GWPs by set", "HS codes", "Safety cautions", "decision support")
	b.shot("05-substance", "A substance: ODP, GWPs by set, identifiers, HS codes, safety class and cautions")
	b.open("/console/catalogue/entries/R-410A")
	b.mustShow("Composition", "HFC-32", "HFC-125")
	b.shot("06-blend", "A blend and its composition")

	// The licence before recording.
	b.open("/console/licences")
	b.mustShow("XA-IMP-2026-002", "Share used")
	b.shot("07-licences", "The licence register with quota lines")
	b.open("/console/licences/XA-IMP-2026-002")
	before := b.text("table.quota tbody")
	b.shot("08-licence-before", "A licence before the batch is recorded")
	b.open("/console/licences/XA-IMP-2026-005")
	b.mustShow("History", "issued", "suspended from 2026-09-15")
	b.do("to the history", chromedp.ScrollIntoView(chromedp.CSS("#history-heading")))
	b.shot("08b-licence-history", "A licence's history: issued, amended, suspended, with reasons and effective dates")

	// Upload the demo batch and see its counts (testdata/demo/golden/check-summary.txt).
	b.open("/console/batches")
	b.shot("09-batch-upload", "Uploading a batch of shipment records")
	file, _ := filepath.Abs(repoFile(t, "testdata/demo/shipments.csv"))
	b.do("upload", chromedp.SetUploadFiles(chromedp.CSS("#file"), []string{file}), chromedp.Click(chromedp.CSS(`form[enctype] button[type="submit"]`)))
	b.waitFor("the verdicts", `!!document.querySelector('#count-records')`, 2*time.Minute)
	for id, key := range map[string]string{"count-records": "Records", "count-accepted": "accepted", "count-warnings": "accepted with warnings", "count-rejected": "rejected"} {
		if got := b.text("#" + id); got != fmt.Sprint(want[key]) {
			t.Errorf("%s shows %s; the golden summary says %d", id, got, want[key])
		}
	}
	b.shot("10-batch-verdicts", "A checked batch: counts, filters, verdicts with line numbers")
	b.do("filter rejected", chromedp.SetValue(chromedp.CSS("#outcome"), "rejected"), chromedp.Click(chromedp.CSS(`form.filters button`)))
	b.waitFor("filtered", `document.querySelector('#shown') && document.querySelector('#shown').innerText.startsWith('`+fmt.Sprint(want["rejected"])+` of')`, 10*time.Second)
	b.shot("11-batch-filtered", "Verdicts filtered to the rejected lines")
	b.do("record", chromedp.Click(chromedp.CSS(`form.record button`)))
	b.waitFor("the recording", `!!document.querySelector('#count-recorded')`, 2*time.Minute)
	b.shot("12-batch-recorded", "The batch recorded")

	// The licence's balance moved.
	b.open("/console/licences/XA-IMP-2026-002")
	if after := b.text("table.quota tbody"); after == before {
		t.Errorf("the licence's quota lines are the same after recording:\n%s", after)
	}
	b.shot("13-licence-after", "The licence after recording: drawn and remaining moved")

	// The recorded shipments: the search, one shipment, and its void.
	b.open("/console/shipments?company=XA-1002&licence=XA-IMP-2026-002")
	b.mustShow("recorded shipments on this page", "CHC-26-0001")
	b.shot("13b-shipments", "Recorded shipments searched by company and licence")
	b.do("open a shipment", chromedp.Click(chromedp.CSS(`table.shipments tbody a`)))
	b.waitFor("shipment page", `!!document.querySelector('#verdict-outcome')`, 10*time.Second)
	b.mustShow("Verdict as recorded", "Quota draws", "Void the shipment")
	b.shot("13c-shipment", "One recorded shipment: the verdict it was recorded with and its quota draws")
	b.do("void it", chromedp.SendKeys(chromedp.CSS("#void-reason"), "declared twice (invented)"), chromedp.Click(chromedp.CSS(`form.void button`)))
	b.waitFor("voided", `document.querySelector('#shipment-state') && document.querySelector('#shipment-state').innerText === 'voided'`, 10*time.Second)
	b.mustShow("declared twice (invented)", "given back")
	b.shot("13d-shipment-voided", "The shipment voided: its draws given back")

	// The year, on screen and in print.
	b.open("/console/year?group=C/I&from=2022&to=2026")
	b.waitFor("chart loaded", `document.querySelector('figure.chart img').complete && document.querySelector('figure.chart img').naturalWidth > 0`, 10*time.Second)
	b.mustShow("Baseline of C/I", "2026 (provisional)")
	b.shot("14-year", "The year: compliance with the chart, the baseline, consumption")
	b.do("print media", chromedp.Func(func(ctx context.Context, tg *chromedp.Target) error {
		_, err := cdp.Call(ctx, tg, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{Media: "print"})
		return err
	}))
	if d := eval[string](b, `getComputedStyle(document.querySelector('header.site nav')).display`); d != "none" {
		t.Errorf("printed, the navigation is %q; want it hidden", d)
	}
	if d := eval[string](b, `getComputedStyle(document.querySelector('form.filters')).display`); d != "none" {
		t.Errorf("printed, the filter form is %q; want it hidden", d)
	}
	b.shot("15-year-print", "The year as printed (print style sheet)")
	b.do("screen media", chromedp.Func(func(ctx context.Context, tg *chromedp.Target) error {
		_, err := cdp.Call(ctx, tg, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{Media: ""})
		return err
	}))

	// The annual data report of the year, asked for from the year page.
	b.do("show the report", chromedp.Click(chromedp.CSS("#show-report")))
	b.waitFor("the report", `!!document.querySelector('#report-state')`, 20*time.Second)
	b.mustShow("Annual data report of 2026", "provisional", "Imports by exporting country", "Download the report as JSON")
	b.do("to the report", chromedp.ScrollIntoView(chromedp.CSS("#report-heading")))
	b.shot("14b-year-report", "The annual data report of the year, provisional while the year is open")

	// The audit log: the recording's draws and the licences are in it.
	b.open("/console/audit?object_type=licence&object_key=XA-IMP-2026-002")
	b.mustShow("XA-IMP-2026-002", "Check the log's hash chain")
	b.shot("15b-audit-log", "The audit log, for the roles that may read it")

	// A form without its token: refused, and nothing changed.
	b.open("/console/licences/XA-IMP-2026-001")
	b.do("drop the token", chromedp.Func(func(ctx context.Context, tg *chromedp.Target) error {
		_, err := chromedp.Evaluate[bool](`(() => { document.querySelectorAll('form.stack input[name=csrf]').forEach(e => e.remove()); return true; })()`)(ctx, tg)
		return err
	}), chromedp.SendKeys(chromedp.CSS("#reason-suspended"), "forged"), chromedp.Click(chromedp.CSS(`form[action$="/status"] button`)))
	b.refused["/console/licences/XA-IMP-2026-001/status"] = true
	b.waitFor("refusal", `document.body.innerText.includes('Form refused')`, 10*time.Second)
	b.mustShow("Nothing was changed")
	b.shot("16-refused-form", "A form posted without its token is refused")
	if st := licenceStatus(t, h, "XA-IMP-2026-001"); st != halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE {
		t.Errorf("the licence is %v after the refused form", st)
	}

	b.open("/console/")
	b.signOut()
	b.shot("17-signed-out", "Signed out")

	// A trader sees its own company only.
	b.signIn("trader")
	b.open("/console/licences")
	b.mustShow("XA-IMP-2026-002", "Licences of your company")
	if body := b.body(); strings.Contains(body, "XA-IMP-2026-001") {
		t.Errorf("the trader sees another company's licence")
	}
	b.shot("18-trader-licences", "A trader sees its own company's licences only")
	b.open("/console/shipments")
	b.mustShow("your credential reaches XA-1002 only", "CHC-26-0001")
	if body := b.body(); strings.Contains(body, "XA-1001") && strings.Contains(body, "FRL-26-0001") {
		t.Errorf("the trader sees another company's shipments")
	}
	b.shot("18b-trader-shipments", "A trader's shipment search: its own company's only, as the server answers")
	b.signOut()

	// A page outside the role.
	b.signIn("reader")
	b.refused["/console/licences"] = true
	b.open("/console/licences")
	b.mustShow("Not allowed for your role")
	b.shot("19-refused-role", "A page outside the role is refused")

	// An expired session.
	h.clock.advance(31 * time.Minute)
	b.refused["/console/catalogue"] = true
	b.open("/console/catalogue")
	b.mustShow("Your session has ended")
	b.shot("20-expired-session", "An expired session is refused")

	// No console errors on any page. A refusal page comes with its HTTP status (401 or
	// 403), which the browser logs as a failed load of that page: those, and only for the
	// pages refused on purpose, are expected.
	time.Sleep(200 * time.Millisecond)
	b.mu.Lock()
	msgs := append([]string(nil), b.messages...)
	b.mu.Unlock()
	expected := 0
	for _, m := range msgs {
		if !strings.HasPrefix(m, "error") && !strings.HasPrefix(m, "exception") && !strings.HasPrefix(m, "warning") {
			continue
		}
		if u, ok := failedLoad(m, h.url); ok && b.refused[u] {
			expected++
			continue
		}
		t.Errorf("browser console: %s", m)
	}
	if expected != len(b.refused) {
		t.Errorf("%d refused loads logged, %d pages refused on purpose: %v", expected, len(b.refused), msgs)
	}
	index := "# Console screenshots\n\nTaken by `TestBrowserWalk` (console/browser_test.go) in Debian's chromium, on the invented demo scenario.\n\n| page | what it shows |\n|---|---|\n" + strings.Join(b.shots, "\n") + "\n"
	if err := os.WriteFile(filepath.Join(b.shotDir, "README.md"), []byte(index), 0o644); err != nil {
		t.Fatal(err)
	}
}

// failedLoad reads "error URL:1 Failed to load resource: the server responded with a
// status of 401|403 ..." and returns the path of URL.
func failedLoad(m, base string) (string, bool) {
	rest, ok := strings.CutPrefix(m, "error "+base)
	if !ok {
		return "", false
	}
	path, msg, ok := strings.Cut(rest, ":1 ")
	if !ok || !(strings.Contains(msg, "status of 401") || strings.Contains(msg, "status of 403")) {
		return "", false
	}
	return path, true
}
