package main

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	healthpb "google.golang.org/grpc/health/grpc_health_v1"

	"github.com/halovet/halovet/pglocal/pgtest"
)

// The scale test checks a 1,000,000-record file through the real binaries (a `halovet
// serve` process and a `halovet check` process) and compares the peak resident memory of
// each with a 10,000-record run: memory must stay flat, within 2x. It takes minutes, so it
// runs only when asked:
//
//	HALOVET_SCALE=1 go test ./cmd/halovet -run Scale -v -timeout 30m

// scaleRegistry is an invented registry (user-assigned codes; no real country's status is
// implied) whose quotas do not run out over a million records.
const scaleRegistry = `{
  "about": "INVENTED registry for the scale test",
  "parties": [
    {"countryCode": "XA", "partyType": "PARTY_TYPE_ARTICLE_5", "hfcGroup": "HFC_GROUP_A5_GROUP_1", "reportingParty": true,
     "boundFrom": {"C/I": "2000-01-01", "F/I": "2021-01-01"}},
    {"countryCode": "XB", "partyType": "PARTY_TYPE_NON_ARTICLE_5", "hfcGroup": "HFC_GROUP_NON_A5", "boundFrom": {"C/I": "1994-06-14", "F/I": "2019-01-01"}},
    {"countryCode": "XC", "partyType": "PARTY_TYPE_ARTICLE_5", "hfcGroup": "HFC_GROUP_A5_GROUP_1", "boundFrom": {"C/I": "2001-01-01", "F/I": "2024-06-01"}}
  ],
  "companies": [{"companyId": "XA-9001", "name": "Scale test importer (invented)"}],
  "licences": [
    {"licenceNumber": "XA-IMP-2026-991", "companyId": "XA-9001", "directions": ["DIRECTION_IMPORT"], "validFrom": "2026-01-01", "validTo": "2026-12-31",
     "status": "LICENCE_STATUS_ACTIVE",
     "quotaLines": [{"lineNumber": 1, "annexGroup": "C/I", "unit": "QUOTA_UNIT_ODP_TONNES", "allocatedAmount": "1000000000"},
                    {"lineNumber": 2, "annexGroup": "F/I", "unit": "QUOTA_UNIT_CO2E_TONNES", "allocatedAmount": "1000000000"}]}
  ]
}`

// scaleTemplates are everyday imports; %s is the key.
var scaleTemplates = []string{
	"%s,import,XA-9001,XA-IMP-2026-991,XB,2026-06-15,HCFC-22,2903.71,75-45-6,,13.6,kg,10,servicing,,",
	"%s,import,XA-9001,XA-IMP-2026-991,XB,2026-06-16,R-404A,3827.61,,,10.9,kg,20,servicing,,",
	"%s,import,XA-9001,XA-IMP-2026-991,XC,2026-06-17,R-410A,,,,11.3,kg,40,servicing,,",
	"%s,import,XA-9001,XA-IMP-2026-991,XB,2026-06-18,R-404A,,,,0.5,t,0,servicing,,\"HFC-125=44;HFC-143a=52;HFC-134a=4\"",
	"%s,import,XA-9001,XA-IMP-2026-991,XC,2026-06-19,R-32,2903.42,75-10-5,,9,kg,30,servicing,,",
	"%s,import,XA-9001,XA-IMP-2026-991,XB,2026-06-20,R-134a,,,,30,lb,24,servicing,recycled,",
}

func writeScaleCSV(t *testing.T, path string, n int) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	fmt.Fprintln(w, "record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,declared_hs_code,declared_cas_number,declared_formula,total_net_quantity,quantity_unit,package_count,purpose,condition,declared_composition")
	for i := 0; i < n; i++ {
		fmt.Fprintf(w, scaleTemplates[i%len(scaleTemplates)], "SC-"+strconv.Itoa(i))
		w.WriteByte('\n')
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// lockedBuffer collects a process's output while the test may read it.
type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// scaleResult is what one run measured.
type scaleResult struct {
	records    int
	serverKB   int64 // VmHWM of the server process just before SIGTERM
	cliKB      int64 // ru_maxrss of the check process
	elapsed    time.Duration
	reportSize int64
}

// vmHWM reads a process's peak resident set size in kB from /proc.
func vmHWM(pid int) (int64, error) {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		return 0, err
	}
	for _, l := range strings.Split(string(b), "\n") {
		if v, ok := strings.CutPrefix(l, "VmHWM:"); ok {
			return strconv.ParseInt(strings.TrimSuffix(strings.TrimSpace(v), " kB"), 10, 64)
		}
	}
	return 0, fmt.Errorf("no VmHWM in /proc/%d/status", pid)
}

// scaleRun starts a fresh server process, checks the file with the CLI process and
// measures both.
func scaleRun(t *testing.T, bin, url, registry, file string, n int) scaleResult {
	t.Helper()
	addr := freeAddr(t)
	serverLog := &lockedBuffer{}
	srv := exec.Command(bin, "serve", "--open-access", "--database-url", url, "--listen", addr, "--http-listen", "", "--log-level", "warn")
	srv.Stdout, srv.Stderr = serverLog, serverLog
	if err := srv.Start(); err != nil {
		t.Fatal(err)
	}
	exited := make(chan error, 1)
	go func() { exited <- srv.Wait() }()
	stopped := false
	defer func() {
		if !stopped {
			_ = srv.Process.Kill()
			<-exited
		}
	}()
	conn := dialTest(t, addr)
	hc := healthpb.NewHealthClient(conn)
	for deadline := time.Now().Add(45 * time.Second); ; {
		ctx, cancel := context.WithTimeout(context.Background(), time.Second)
		resp, err := hc.Check(ctx, &healthpb.HealthCheckRequest{})
		cancel()
		if err == nil && resp.GetStatus() == healthpb.HealthCheckResponse_SERVING {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("server not SERVING within 45 s:\n%s", serverLog.String())
		}
		select {
		case err := <-exited:
			stopped = true
			t.Fatalf("server exited early (%v):\n%s", err, serverLog.String())
		case <-time.After(100 * time.Millisecond):
		}
	}
	if out, err := exec.Command(bin, "load", "--server", addr, registry).CombinedOutput(); err != nil {
		t.Fatalf("halovet load: %v\n%s", err, out)
	}

	report := file + ".report.csv"
	cli := exec.Command(bin, "check", "--server", addr, "--progress", "never", "--report", report, file)
	var stdout, stderr bytes.Buffer
	cli.Stdout, cli.Stderr = &stdout, &stderr
	start := time.Now()
	if err := cli.Run(); err != nil {
		t.Fatalf("halovet check %s: %v\n%s\n%s", filepath.Base(file), err, stdout.String(), stderr.String())
	}
	res := scaleResult{records: n, elapsed: time.Since(start)}
	ru, ok := cli.ProcessState.SysUsage().(*syscall.Rusage)
	if !ok {
		t.Fatal("no resource usage for the check process")
	}
	res.cliKB = ru.Maxrss // kilobytes on Linux
	if !strings.Contains(stdout.String(), fmt.Sprintf("Records  %d", n)) || !strings.Contains(stdout.String(), fmt.Sprintf("accepted  %d", n)) {
		t.Fatalf("summary of %s does not show %d records, all accepted:\n%s", filepath.Base(file), n, stdout.String())
	}
	kb, err := vmHWM(srv.Process.Pid)
	if err != nil {
		t.Fatal(err)
	}
	res.serverKB = kb
	if st, err := os.Stat(report); err == nil {
		res.reportSize = st.Size()
	}
	_ = os.Remove(report)

	if err := srv.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	select {
	case err := <-exited:
		stopped = true
		if err != nil {
			t.Errorf("server exited with %v after SIGTERM:\n%s", err, serverLog.String())
		}
	case <-time.After(30 * time.Second):
		t.Errorf("server still running 30 s after SIGTERM")
	}
	return res
}

func TestScaleFlatMemory(t *testing.T) {
	if os.Getenv("HALOVET_SCALE") != "1" {
		t.Skip("set HALOVET_SCALE=1 to check a 1,000,000-record file (takes minutes)")
	}
	bin := halovetBinary(t)
	url := pgtest.NewDatabase(t, "halovet_cmd", migrateForTest)
	dir := t.TempDir()
	registry := filepath.Join(dir, "registry.json")
	if err := os.WriteFile(registry, []byte(scaleRegistry), 0o644); err != nil {
		t.Fatal(err)
	}
	var results []scaleResult
	for _, n := range []int{10_000, 1_000_000} {
		file := filepath.Join(dir, fmt.Sprintf("scale-%d.csv", n))
		writeScaleCSV(t, file, n)
		r := scaleRun(t, bin, url, registry, file, n)
		_ = os.Remove(file)
		t.Logf("%9d records: %v (%.0f records/s); peak RSS server %d kB, CLI %d kB; report %d bytes",
			n, r.elapsed.Round(time.Millisecond), float64(n)/r.elapsed.Seconds(), r.serverKB, r.cliKB, r.reportSize)
		results = append(results, r)
	}
	small, big := results[0], results[1]
	if big.serverKB > 2*small.serverKB {
		t.Errorf("server peak RSS %d kB for 1,000,000 records is more than twice the %d kB of 10,000 records", big.serverKB, small.serverKB)
	}
	if big.cliKB > 2*small.cliKB {
		t.Errorf("CLI peak RSS %d kB for 1,000,000 records is more than twice the %d kB of 10,000 records", big.cliKB, small.cliKB)
	}
}
