package main

import (
	"io"

	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/halovet/halovet/validate"
)

// TestExitCodeContract runs every client verb through the command line, as a user would,
// for each outcome of the exit-code contract (exitCodeHelp): success 0, rejected 1,
// unusable input 2, unreachable server 3. A verb whose answer cannot refuse part of its
// input (a report, a listing, an import) has no "rejected" row.
func TestExitCodeContract(t *testing.T) {
	d := startDemoServerAddr(t)
	dir := t.TempDir()
	// An unreadable line 4 (a field too many) between good lines; invented records.
	batch := filepath.Join(dir, "line4.csv")
	good, err := os.ReadFile(demoBatch)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitN(string(good), "\n", 4)
	writeFile(t, batch, lines[0]+"\n"+lines[1]+"\n"+lines[2]+"\n"+"X-4,import,one,field,too,many,,,,,,,,,,,,,\n")
	okBatch := filepath.Join(dir, "ok.csv")
	writeFile(t, okBatch, lines[0]+"\n# a comment line\n"+lines[1]+"\n")
	empty := filepath.Join(dir, "empty.csv")
	writeFile(t, empty, lines[0]+"\n")
	over := filepath.Join(dir, "over.csv")
	writeFile(t, over, "entry_key,year,entry_type,substance,metric_tonnes,note\nXA-TEST-2025-HCFC-22,2025,historical-import,HCFC-22,5000,invented to exceed\n")
	// A registry whose last object is invalid (an unknown company); invented.
	badRegistry := filepath.Join(dir, "bad-registry.json")
	writeFile(t, badRegistry, `{"companies": [{"companyId": "XA-9001", "name": "Invented"}], "licences": [
	  {"licenceNumber": "XA-IMP-2026-901", "companyId": "XA-9001", "directions": ["DIRECTION_IMPORT"], "validFrom": "2026-01-01", "validTo": "2026-12-31",
	   "quotaLines": [{"annexGroup": "C/I", "unit": "QUOTA_UNIT_ODP_TONNES", "allocatedAmount": "1"}]},
	  {"licenceNumber": "XA-IMP-2026-902", "companyId": "NOBODY", "directions": ["DIRECTION_IMPORT"], "validFrom": "2026-01-01", "validTo": "2026-12-31"}]}`)
	unknownFix := filepath.Join(dir, "unknown-fix.csv")
	writeFile(t, unknownFix, lines[0]+"\nNO-SUCH-KEY,import,XA-1002,XA-IMP-2026-002,XB,2026-01-05,HCFC-22,,,,1,kg,,,servicing,,,\n")

	partners := filepath.Join(dir, "partners.csv")
	writeFile(t, partners, "report_key,year,partner_country,substance,metric_tonnes,source\nXC-2026-CFC-12,2026,XC,CFC-12,5,invented: no such import recorded\n")
	badPartners := filepath.Join(dir, "partners-bad.csv")
	writeFile(t, badPartners, "report_key,year,partner_country,substance,metric_tonnes\nXC-1,2026,XC,R-410A,5\n")
	figures := filepath.Join(dir, "figures.json")
	writeFile(t, figures, `{"exemptions": [{"exemption_key": "XA-CUE-2026", "year": 2026, "annex_group": "E/I", "use": "critical",
	  "amount": 1, "source": "invented decision for the test"}],
	 "official_figures": [{"figure_key": "XA-LIMIT-C/I-2026", "kind": "limit", "year": 2026, "annex_group": "C/I", "amount": 9,
	  "source": "invented agreed plan"}],
	 "hfc23_entries": [{"entry_key": "P1-2026", "facility": "plant 1 (invented)", "year": 2026, "generated_tonnes": 3,
	  "destroyed_tonnes": 3}]}`)
	badFigures := filepath.Join(dir, "figures-bad.json")
	writeFile(t, badFigures, `{"exemptions": [{"exemption_key": "x", "year": 2026, "annex_group": "C/I", "use": "critical", "amount": 1, "source": "invented"}]}`)
	dead := "127.0.0.1:1" // nothing listens on port 1 of loopback
	s := "--server"

	cases := []struct {
		name   string
		args   []string
		code   int
		stdout string // must occur in standard output
		stderr string // must occur in standard error
	}{
		{"check success", []string{"check", okBatch, s, d}, exitOK, "accepted", ""},
		{"check rejected, line 4 named", []string{"check", batch, s, d}, exitRejected, "\n4 ", "rejected"},
		{"check header only", []string{"check", s, d, empty}, exitUsage, "", "holds no records"},
		{"check entries file", []string{"check", s, d, demoDir + "/national_entries.csv"}, exitUsage, "", "halovet entries"},
		{"check registry file", []string{"check", s, d, demoScenario}, exitUsage, "", "halovet load"},
		{"check unreachable", []string{"check", okBatch, s, dead}, exitUnreachable, "", "halovet serve"},
		{"lookup success", []string{"lookup", "R-22", s, d}, exitOK, "HCFC-22", ""},
		{"lookup rejected", []string{"lookup", "R-4O4A", s, d}, exitRejected, "", "did not resolve"},
		{"lookup unusable", []string{"lookup", s, d}, exitUsage, "", "IDENTIFIER"},
		{"lookup unreachable", []string{"lookup", "R-22", s, dead}, exitUnreachable, "", "--server"},
		{"mix success", []string{"mix", "R-410A", s, d}, exitOK, "R-410A", ""},
		{"mix unusable", []string{"mix", "R-32:50,R-125", s, d}, exitUsage, "", "MASS_PERCENT"},
		{"mix unreachable", []string{"mix", "R-410A", s, dead}, exitUnreachable, "", "halovet serve"},
		{"cylinder success", []string{"cylinder", "HFC-125=44.5;HFC-143a=51.5;HFC-134a=4", "--declared", "R-404A", s, d}, exitOK, "FITS the declared R-404A", ""},
		{"cylinder unusable", []string{"cylinder", "R-22=50;R-32=20", s, d}, exitUsage, "", "sum to 70"},
		{"cylinder unreachable", []string{"cylinder", "R-22=100", s, dead}, exitUnreachable, "", "halovet serve"},
		{"licences success", []string{"licences", s, d}, exitOK, "XA-IMP-2026-002", ""},
		{"licences unusable", []string{"licences", "extra", s, d}, exitUsage, "", "unexpected argument"},
		{"licences unreachable", []string{"licences", s, dead}, exitUnreachable, "", "halovet serve"},
		{"consumption success", []string{"consumption", "--year", "2026", s, d}, exitOK, "2026", ""},
		{"consumption unusable", []string{"consumption", s, d}, exitUsage, "", "--year"},
		{"consumption unreachable", []string{"consumption", "--year", "2026", s, dead}, exitUnreachable, "", "halovet serve"},
		{"baseline success", []string{"baseline", "--group", "C/I", s, d}, exitOK, "C/I", ""},
		{"baseline unusable", []string{"baseline", "--group", "Z/9", s, d}, exitUsage, "", "Z/9"},
		{"baseline unreachable", []string{"baseline", "--group", "C/I", s, dead}, exitUnreachable, "", "halovet serve"},
		{"compliance success", []string{"compliance", "--group", "C/I", "--from", "2026", s, d}, exitOK, "2026", ""},
		// An invented 2025 import total far over XA's allowed level for HCFCs.
		{"entries import", []string{"entries", over, s, d}, exitOK, "stored 1 entries", ""},
		{"compliance rejected", []string{"compliance", "--group", "C/I", "--from", "2025", s, d}, exitRejected, "EXCEEDED", "exceeded the allowed level in 2025"},
		{"compliance unusable", []string{"compliance", "--from", "2026", s, d}, exitUsage, "", "--group"},
		{"compliance unreachable", []string{"compliance", "--group", "C/I", "--from", "2026", s, dead}, exitUnreachable, "", "halovet serve"},
		{"quotas success", []string{"quotas", "--year", "2027", "--group", "C/I", "--reference-years", "2026", s, d}, exitOK, "Quota plan", ""},
		{"quotas unusable", []string{"quotas", "--year", "2027", "--group", "C/I", "--reference-years", "last", s, d}, exitUsage, "", "--reference-years"},
		{"quotas unreachable", []string{"quotas", "--year", "2027", "--group", "C/I", "--reference-years", "2026", s, dead}, exitUnreachable, "", "halovet serve"},
		{"entries success", []string{"entries", "--list", s, d}, exitOK, "stored entries", ""},
		{"entries shipments file", []string{"entries", okBatch, s, d}, exitUsage, "", "halovet check"},
		{"entries unreachable", []string{"entries", "--list", s, dead}, exitUnreachable, "", "halovet serve"},
		{"year-report success", []string{"year-report", "--year", "2026", s, d}, exitOK, "Data report of XA for 2026", ""},
		{"year-report unusable", []string{"year-report", "--output", "csv", "--year", "2026", s, d}, exitUsage, "", "--dir"},
		{"year-report unreachable", []string{"year-report", "--year", "2026", s, dead}, exitUnreachable, "", "halovet serve"},
		{"partners success", []string{"partners", partners, s, d}, exitOK, "stored 1 partner figures", ""},
		{"partners rejected", []string{"partners", "--reconcile", "--year", "2026", s, d}, exitRejected, "CFC-12", "differ beyond the tolerance"},
		{"partners unusable", []string{"partners", badPartners, s, d}, exitUsage, "", "line 2: substance"},
		{"partners unreachable", []string{"partners", "--reconcile", "--year", "2026", s, dead}, exitUnreachable, "", "halovet serve"},
		{"year-figures success", []string{"year-figures", figures, s, d}, exitOK, "stored 1 HFC-23 facility entries", ""},
		{"year-figures list", []string{"year-figures", "--list", "--year", "2026", s, d}, exitOK, "invented agreed plan", ""},
		{"year-figures unusable", []string{"year-figures", badFigures, s, d}, exitUsage, "", "exemptions[0].use"},
		{"year-figures unreachable", []string{"year-figures", "--list", s, dead}, exitUnreachable, "", "halovet serve"},
		{"load success", []string{"load", demoScenario, s, d}, exitOK, "loaded", ""},
		{"load unusable", []string{"load", okBatch, s, d}, exitUsage, "", "not a registry file"},
		{"load unreachable", []string{"load", demoScenario, s, dead}, exitUnreachable, "", "halovet serve"},
		{"load unusable: last object refused", []string{"load", badRegistry, s, d}, exitUsage, "", "nothing was changed"},
		{"history after a refused load", []string{"history", "XA-IMP-2026-901", s, d}, exitUsage, "", "not found"},
		{"load dry run", []string{"load", "--dry-run", demoScenario, s, d}, exitOK, "dry run, nothing written", ""},
		{"load report", []string{"load", demoScenario, s, d}, exitOK, "licences[4]", ""},
		// Licence verbs on the invented demo licences; the rows run in order.
		{"suspend unusable: suspended already", []string{"suspend", "XA-IMP-2026-005", "--reason", "test", s, d}, exitUsage, "", "only an active licence can be suspended"},
		{"suspend unusable: no reason", []string{"suspend", "XA-IMP-2026-002", s, d}, exitUsage, "", "--reason is required"},
		{"suspend unusable: bad date", []string{"suspend", "XA-IMP-2026-002", "--from", "2026-02-30", "--reason", "test", s, d}, exitUsage, "", "effective_date"},
		{"suspend unreachable", []string{"suspend", "XA-IMP-2026-002", "--reason", "test", s, dead}, exitUnreachable, "", "halovet serve"},
		{"reinstate success", []string{"reinstate", "XA-IMP-2026-005", "--from", "2026-11-01", "--reason", "test", s, d}, exitOK, "reinstated from 2026-11-01", ""},
		{"reinstate unusable: not suspended", []string{"reinstate", "XA-IMP-2026-005", "--reason", "test", s, d}, exitUsage, "", "a reinstatement needs a suspended licence"},
		{"revoke success", []string{"revoke", "XA-IMP-2026-005", "--from", "2026-11-15", "--reason", "test", s, d}, exitOK, "revoked from 2026-11-15", ""},
		{"revoke unusable: revoked already", []string{"revoke", "XA-IMP-2026-005", "--reason", "test", s, d}, exitUsage, "", "already revoked"},
		{"history success", []string{"history", "XA-IMP-2026-005", s, d}, exitOK, "reinstated", ""},
		{"history unusable", []string{"history", "NOPE-1", s, d}, exitUsage, "", "NOPE-1"},
		{"history unreachable", []string{"history", "XA-IMP-2026-005", s, dead}, exitUnreachable, "", "halovet serve"},
		{"amend success", []string{"amend", "XA-IMP-2026-001", "--allocate", "1=4", "--reason", "test", s, d}, exitOK, "amended", ""},
		{"amend unusable: no such line", []string{"amend", "XA-IMP-2026-001", "--allocate", "9=1", "--reason", "test", s, d}, exitUsage, "", "no quota line 9"},
		{"amend unusable: nothing to amend", []string{"amend", "XA-IMP-2026-001", "--reason", "test", s, d}, exitUsage, "", "nothing to amend"},
		{"amend unreachable", []string{"amend", "XA-IMP-2026-001", "--allocate", "1=4", "--reason", "test", s, dead}, exitUnreachable, "", "halovet serve"},
		{"close-line success", []string{"close-line", "XA-IMP-2026-001", "2", "--open", "F/I:co2e-t:1000", "--reason", "test", s, d}, exitOK, "line 3 opened", ""},
		{"close-line unusable: closed already", []string{"close-line", "XA-IMP-2026-001", "2", "--reason", "test", s, d}, exitUsage, "", "closed already"},
		{"close-line unusable: bad spec", []string{"close-line", "XA-IMP-2026-001", "1", "--open", "C/I:tonnes:1", "--reason", "test", s, d}, exitUsage, "", "metric-t"},
		{"close-line unreachable", []string{"close-line", "XA-IMP-2026-001", "1", "--reason", "test", s, dead}, exitUnreachable, "", "halovet serve"},
		{"reporting-party success", []string{"reporting-party", "XA", s, d}, exitOK, "already", ""},
		{"reporting-party unusable: entries recorded", []string{"reporting-party", "XB", s, d}, exitUsage, "", "repeat with force"},
		{"reporting-party unusable: force without reason", []string{"reporting-party", "XB", "--force", s, d}, exitUsage, "", "--force needs --reason"},
		{"reporting-party unreachable", []string{"reporting-party", "XA", s, dead}, exitUnreachable, "", "halovet serve"},
		{"shipments success", []string{"shipments", "list", "--company", "XA-1002", s, d}, exitOK, "recorded shipments", ""},
		{"shipments rejected", []string{"shipments", "correct", unknownFix, "--reason", "test", s, d}, exitRejected, "not corrected", "refused"},
		{"shipments unusable", []string{"shipments", "void", "12", s, d}, exitUsage, "", "--reason"},
		{"shipments unknown id", []string{"shipments", "show", "987654", s, d}, exitUsage, "", "NotFound"},
		{"shipments unreachable", []string{"shipments", "list", s, dead}, exitUnreachable, "", "halovet serve"},
		{"year success", []string{"year", "list", s, d}, exitOK, "no reporting year is closed", ""},
		{"year unusable", []string{"year", "close", "2026", s, d}, exitUsage, "", "--reason"},
		{"year unreachable", []string{"year", "list", s, dead}, exitUnreachable, "", "halovet serve"},
		{"unknown verb", []string{"chek"}, exitUsage, "", "did you mean check?"},
		{"unknown flag", []string{"licences", "--colour"}, exitUsage, "", "--colour"},
		{"probe success", []string{"probe", s, d}, exitOK, "SERVING", ""},
		{"probe names the build", []string{"probe", s, d}, exitOK, "(commit ", ""},
		{"probe live", []string{"probe", "--live", s, d}, exitOK, "live ", ""},
		{"probe unusable", []string{"probe", "extra", s, d}, exitUsage, "", "unexpected argument"},
		{"probe unreachable", []string{"probe", s, dead}, exitUnreachable, "", "halovet serve"},
		{"version", []string{"version"}, exitOK, "(commit ", ""},
		{"--version", []string{"--version"}, exitOK, "halovet ", ""},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			code, stdout, stderr := runCaptured(t, tc.args...)
			if code != tc.code {
				t.Errorf("halovet %s: exit code %d; want %d\nstdout:\n%s\nstderr:\n%s", strings.Join(tc.args, " "), code, tc.code, stdout, stderr)
			}
			if !strings.Contains(stdout, tc.stdout) {
				t.Errorf("stdout lacks %q:\n%s", tc.stdout, stdout)
			}
			if !strings.Contains(stderr, tc.stderr) {
				t.Errorf("stderr lacks %q:\n%s", tc.stderr, stderr)
			}
		})
	}
}

// TestServerWithoutPort: a host without a port means halovet's port, not gRPC's 443.
func TestServerWithoutPort(t *testing.T) {
	for in, want := range map[string]string{
		"127.0.0.1":        "127.0.0.1:7390",
		"localhost":        "localhost:7390",
		"127.0.0.1:9000":   "127.0.0.1:9000",
		"::1":              "[::1]:7390",
		"[::1]":            "[::1]:7390",
		"[::1]:9000":       "[::1]:9000",
		"dns:///host:1234": "dns:///host:1234",
	} {
		got, err := serverAddress(in)
		if err != nil || got != want {
			t.Errorf("serverAddress(%q) = %q, %v; want %q", in, got, err, want)
		}
	}
}

// TestBashCompletion loads 'halovet completion bash' into a real bash and asks it to
// complete a verb and a flag.
func TestBashCompletion(t *testing.T) {
	bash, err := exec.LookPath("bash")
	if err != nil {
		t.Fatalf("bash is needed for this test: %v", err)
	}
	bin := halovetBinary(t)
	script := filepath.Join(t.TempDir(), "halovet.bash")
	out, err := exec.Command(bin, "completion", "bash").Output()
	if err != nil {
		t.Fatalf("halovet completion bash: %v", err)
	}
	writeFile(t, script, string(out))
	complete := func(line string) []string {
		t.Helper()
		words := strings.Fields(line)
		if strings.HasSuffix(line, " ") {
			words = append(words, "")
		}
		// bash-completion's _get_comp_words_by_ref, reduced to what the script asks of it,
		// when the bash-completion package is not installed.
		prog := `if [[ -r /usr/share/bash-completion/bash_completion ]]; then source /usr/share/bash-completion/bash_completion; else
_get_comp_words_by_ref() { cur="${COMP_WORDS[COMP_CWORD]}"; prev="${COMP_WORDS[COMP_CWORD-1]}"; words=("${COMP_WORDS[@]}"); cword=$COMP_CWORD; }
fi
source "$1"
PATH="$(dirname "$2"):$PATH"
COMP_LINE="$3"; COMP_POINT=${#COMP_LINE}
read -r -a COMP_WORDS <<< "$3"
[[ "$3" == *" " ]] && COMP_WORDS+=("")
COMP_CWORD=$(( ${#COMP_WORDS[@]} - 1 ))
__start_halovet halovet
printf '%s\n' "${COMPREPLY[@]}"`
		cmd := exec.Command(bash, "--norc", "--noprofile", "-c", prog, "bash", script, bin, line)
		cmd.Env = append(os.Environ(), "BASH_COMP_DEBUG_FILE=")
		b, err := cmd.CombinedOutput()
		if err != nil {
			t.Fatalf("completing %q: %v\n%s", line, err, b)
		}
		_ = words
		return strings.Fields(string(b))
	}
	if got := complete("halovet ch"); !contains(got, "check") {
		t.Errorf("completing 'halovet ch' gave %q; want check among them", got)
	}
	if got := complete("halovet check --rec"); !contains(got, "--record") && !contains(got, "--records-per-message") {
		t.Errorf("completing 'halovet check --rec' gave %q; want --record", got)
	}
	if got := complete("halovet lookup --out"); !contains(got, "--output") {
		t.Errorf("completing 'halovet lookup --out' gave %q; want --output", got)
	}
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func writeFile(t *testing.T, path, text string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
}

// startDemoServerAddr runs the server in process with the demo registry loaded and
// returns its address.
func startDemoServerAddr(t *testing.T) string {
	t.Helper()
	ts := startTestServer(t, demoNow)
	if _, err := loadRegistry(t.Context(), ts.conn, demoScenario); err != nil {
		t.Fatalf("load %s: %v", demoScenario, err)
	}
	if _, err := importEntries(t.Context(), ts.conn, demoDir+"/national_entries.csv"); err != nil {
		t.Fatalf("import the demo's national entries: %v", err)
	}
	o := checkOptions{path: demoBatch, format: validate.FormatCSV, record: true, output: "text", maxLine: validate.DefaultMaxLineBytes}
	if _, err := checkFile(t.Context(), ts.conn, o, io.Discard, io.Discard); err != nil {
		t.Fatalf("record the demo batch: %v", err)
	}
	return ts.addr
}
