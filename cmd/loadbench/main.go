// Command loadbench is halovet's load benchmark (make bench-load). It builds halovet,
// runs `halovet serve` on a private PostgreSQL cluster in a temporary directory, loads the
// invented demo scenario, and drives five calls at a fixed concurrency over a fixed number
// of connections: the health check (the ceiling: the least work a call can be), then
// ResolveIdentifier, GetEntry, EvaluateMixture and CheckShipment. The calls are measured
// in interleaved rounds (each round measures every call once, in that order), so that
// whatever else the machine does falls on all of them alike; each call's rate is given as
// a ratio to the health check's rate of the same round, with its latency percentiles, as
// medians over the rounds. The table is printed in Markdown for BENCHMARKS.md. The server
// runs with --open-access on loopback: the driver has no credential. With -against DIR, a
// second checkout (for example of main) is built and served beside the first on its own
// cluster, and every round measures both, alternating which goes first: a before-and-after
// comparison in one run, one table per server.
//
// It does what ghz would at `--concurrency 50 --connections 4`: ghz v0.93.0, the only
// version the module proxy serves, no longer builds against the grpc-go in use
// (grpc.WithBalancerName is gone), so this driver is written with grpc-go itself.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"sort"
	"strings"
	"sync"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials/insecure"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

func main() {
	concurrency := flag.Int("concurrency", 50, "calls in flight at once")
	connections := flag.Int("connections", 4, "client connections the calls are spread over")
	duration := flag.Duration("duration", 5*time.Second, "measured time per call and round")
	warmup := flag.Duration("warmup", time.Second, "unmeasured time before each measurement")
	rounds := flag.Int("rounds", 3, "interleaved rounds; the table gives medians over them")
	repo := flag.String("repo", ".", "the repository root (for ./cmd/halovet and testdata/demo)")
	against := flag.String("against", "", "a second checkout (for example of main) built and served beside -repo on its own cluster; each round measures both, alternating which goes first")
	flag.Parse()
	if err := run(*repo, *against, *concurrency, *connections, *rounds, *duration, *warmup); err != nil {
		fmt.Fprintln(os.Stderr, "loadbench:", err)
		os.Exit(1)
	}
}

// target is one call the benchmark drives.
type target struct {
	name string
	call func(ctx context.Context, conn *grpc.ClientConn) error
}

func targets() []target {
	// CHC-26-0002 of the invented demo scenario (testdata/demo/shipments.csv).
	record := &halovetv1.ShipmentRecord{RecordKey: "CHC-26-0002", Direction: halovetv1.Direction_DIRECTION_IMPORT, CompanyId: "XA-1002",
		LicenceNumber: "XA-IMP-2026-002", PartnerCountry: "XC", DeclarationDate: "2026-01-05", Substance: "HCFC-22",
		TotalNetQuantity: "0.7", QuantityUnit: "t", Purpose: halovetv1.Purpose_PURPOSE_SERVICING}
	return []target{
		{"health check", func(ctx context.Context, c *grpc.ClientConn) error {
			_, err := healthpb.NewHealthClient(c).Check(ctx, &healthpb.HealthCheckRequest{})
			return err
		}},
		{"ResolveIdentifier", func(ctx context.Context, c *grpc.ClientConn) error {
			_, err := halovetv1.NewCatalogueServiceClient(c).ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: "hcfc 22"})
			return err
		}},
		{"GetEntry", func(ctx context.Context, c *grpc.ClientConn) error {
			_, err := halovetv1.NewCatalogueServiceClient(c).GetEntry(ctx, &halovetv1.GetEntryRequest{Designation: "HCFC-22"})
			return err
		}},
		{"EvaluateMixture", func(ctx context.Context, c *grpc.ClientConn) error {
			_, err := halovetv1.NewCatalogueServiceClient(c).EvaluateMixture(ctx, &halovetv1.EvaluateMixtureRequest{
				Blend: "R-404A", NetMassKg: "1000"})
			return err
		}},
		{"CheckShipment", func(ctx context.Context, c *grpc.ClientConn) error {
			_, err := halovetv1.NewShipmentServiceClient(c).CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: record})
			return err
		}},
	}
}

// result is one measurement of one call.
type result struct {
	rate          float64 // calls per second
	p50, p95, p99 time.Duration
}

// server is one halovet build serving on its own private cluster.
type server struct {
	label string
	conns []*grpc.ClientConn
	stop  func()
}

// startServer builds halovet from repo into tmp/name, serves it on a private cluster under
// tmp/name-pg with open access (loopback only: the driver has no credential), loads the
// invented demo scenario and opens the client connections.
func startServer(tmp, name, repo string, connections int) (*server, error) {
	bin := filepath.Join(tmp, name)
	build := exec.Command("go", "build", "-o", bin, "./cmd/halovet")
	build.Dir, build.Stdout, build.Stderr = repo, os.Stderr, os.Stderr
	if err := build.Run(); err != nil {
		return nil, fmt.Errorf("building halovet from %s: %w", repo, err)
	}
	addr, httpAddr := freeAddr(), freeAddr()
	srv := exec.Command(bin, "serve", "--data-dir", filepath.Join(tmp, name+"-pg"), "--listen", addr, "--http-listen", httpAddr,
		"--log-level", "warn", "--open-access")
	srv.Stdout, srv.Stderr = os.Stderr, os.Stderr
	if err := srv.Start(); err != nil {
		return nil, err
	}
	s := &server{label: repo, stop: func() {
		_ = srv.Process.Signal(os.Interrupt)
		_ = srv.Wait()
	}}
	fail := func(err error) (*server, error) {
		for _, c := range s.conns {
			c.Close()
		}
		s.stop()
		return nil, err
	}
	deadline := time.Now().Add(2 * time.Minute)
	for exec.Command(bin, "probe", "--server", addr, "--timeout", "1s").Run() != nil {
		if time.Now().After(deadline) {
			return fail(errors.New("the server did not become ready within 2 minutes"))
		}
		time.Sleep(300 * time.Millisecond)
	}
	load := exec.Command(bin, "load", filepath.Join(repo, "testdata/demo/scenario.json"), "--server", addr)
	load.Stdout, load.Stderr = os.Stderr, os.Stderr
	if err := load.Run(); err != nil {
		return fail(fmt.Errorf("loading the demo scenario: %w", err))
	}
	if out, err := exec.Command("git", "-C", repo, "describe", "--always", "--dirty").Output(); err == nil {
		s.label = fmt.Sprintf("%s (%s)", repo, strings.TrimSpace(string(out)))
	}
	for i := 0; i < connections; i++ {
		// Each client is its own HTTP/2 connection.
		c, err := grpc.NewClient(addr, grpc.WithTransportCredentials(insecure.NewCredentials()))
		if err != nil {
			return fail(err)
		}
		s.conns = append(s.conns, c)
	}
	return s, nil
}

func (s *server) close() {
	for _, c := range s.conns {
		c.Close()
	}
	s.stop()
}

func run(repo, against string, concurrency, connections, rounds int, duration, warmup time.Duration) error {
	tmp, err := os.MkdirTemp("", "halovet-loadbench-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmp)
	var servers []*server
	defer func() {
		for _, s := range servers {
			s.close()
		}
	}()
	for i, r := range []string{repo, against} {
		if r == "" {
			continue
		}
		s, err := startServer(tmp, fmt.Sprintf("halovet-%d", i), r, connections)
		if err != nil {
			return err
		}
		servers = append(servers, s)
	}
	ts := targets()
	results := make([][][]result, len(servers)) // [server][target][round]
	for k := range results {
		results[k] = make([][]result, len(ts))
	}
	for r := 0; r < rounds; r++ {
		for j := range servers {
			// With two servers, each round alternates which goes first.
			k := (j + r) % len(servers)
			s := servers[k]
			for i, t := range ts {
				if _, err := measure(t, s.conns, concurrency, warmup); err != nil { // warm up
					return fmt.Errorf("%s: %s: %w", s.label, t.name, err)
				}
				res, err := measure(t, s.conns, concurrency, duration)
				if err != nil {
					return fmt.Errorf("%s: %s: %w", s.label, t.name, err)
				}
				fmt.Fprintf(os.Stderr, "round %d server %d %-18s %8.0f calls/s  p50 %v  p95 %v  p99 %v  load %s\n", r+1, k, t.name, res.rate, res.p50, res.p95, res.p99, loadAverage())
				results[k][i] = append(results[k][i], res)
			}
		}
	}

	fmt.Printf("Load benchmark (`make bench-load`): %d calls in flight over %d connections, %v per call and round, %d interleaved rounds; medians over the rounds. Machine: %d CPUs (GOMAXPROCS %d), server and driver on the same machine, %s; load average at the end %s.\n",
		concurrency, connections, duration, rounds, runtime.NumCPU(), runtime.GOMAXPROCS(0), runtime.Version(), loadAverage())
	for k, s := range servers {
		fmt.Printf("\nServer %d: %s\n\n", k, s.label)
		fmt.Println("| call | calls/s | ratio to the health check | ratio to ResolveIdentifier | p50 | p95 | p99 |")
		fmt.Println("|---|---:|---:|---:|---:|---:|---:|")
		for i, t := range ts {
			var rates, ratios, toResolve []float64
			var p50, p95, p99 []time.Duration
			for r, res := range results[k][i] {
				rates = append(rates, res.rate)
				ratios = append(ratios, res.rate/results[k][0][r].rate)
				toResolve = append(toResolve, res.rate/results[k][1][r].rate)
				p50, p95, p99 = append(p50, res.p50), append(p95, res.p95), append(p99, res.p99)
			}
			fmt.Printf("| %s | %.0f | %.2f | %.2f | %s | %s | %s |\n", t.name, median(rates), median(ratios), median(toResolve),
				ms(median(p50)), ms(median(p95)), ms(median(p99)))
		}
	}
	return nil
}

// loadAverage is the machine's 1-minute load average, "?" when unknown.
func loadAverage() string {
	b, err := os.ReadFile("/proc/loadavg")
	if err != nil {
		return "?"
	}
	f := strings.Fields(string(b))
	if len(f) == 0 {
		return "?"
	}
	return f[0]
}

// measure runs concurrency workers calling t for d, each on connection i%len(conns).
func measure(t target, conns []*grpc.ClientConn, concurrency int, d time.Duration) (result, error) {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	lat := make([][]time.Duration, concurrency)
	errs := make([]error, concurrency)
	var wg sync.WaitGroup
	start := time.Now()
	stop := start.Add(d)
	for w := 0; w < concurrency; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			c := conns[w%len(conns)]
			for time.Now().Before(stop) {
				callCtx, done := context.WithTimeout(ctx, 30*time.Second)
				t0 := time.Now()
				err := t.call(callCtx, c)
				done()
				if err != nil {
					errs[w] = err
					cancel()
					return
				}
				lat[w] = append(lat[w], time.Since(t0))
			}
		}(w)
	}
	wg.Wait()
	elapsed := time.Since(start)
	if err := errors.Join(errs...); err != nil {
		return result{}, err
	}
	var all []time.Duration
	for _, l := range lat {
		all = append(all, l...)
	}
	if len(all) == 0 {
		return result{}, errors.New("no call finished")
	}
	slices.Sort(all)
	q := func(p float64) time.Duration { return all[min(len(all)-1, int(p*float64(len(all))))] }
	return result{rate: float64(len(all)) / elapsed.Seconds(), p50: q(0.50), p95: q(0.95), p99: q(0.99)}, nil
}

func median[T float64 | time.Duration](xs []T) T {
	s := slices.Clone(xs)
	sort.Slice(s, func(i, j int) bool { return s[i] < s[j] })
	return s[len(s)/2]
}

func ms(d time.Duration) string { return fmt.Sprintf("%.2f ms", float64(d)/float64(time.Millisecond)) }

func freeAddr() string {
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		panic(err)
	}
	defer l.Close()
	return l.Addr().String()
}
