package service_test

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math/big"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"
	"google.golang.org/grpc"
	healthpb "google.golang.org/grpc/health/grpc_health_v1"
	"google.golang.org/protobuf/encoding/protojson"

	"github.com/halovet/halovet/controls"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
	"github.com/halovet/halovet/validate"
)

// Benchmarks of the shipment path, each beside its baseline in the same run (BENCHMARKS.md,
// "Shipments"):
//
//	BenchmarkParseCSVAlone     the CSV reader over the batch, nothing else (baseline of checking)
//	BenchmarkCheckInProcess    validate over the parsed batch with the server's kind of environment
//	BenchmarkCheckStreamed     parse + CheckShipments over gRPC on loopback to a real server
//	BenchmarkCheckUnary        the same records, one CheckShipment call each, over gRPC on loopback
//	BenchmarkRecordStreamed    parse + RecordShipments: checked, stored, quota drawn, in PostgreSQL
//	BenchmarkCopyBaseline      plain COPY of the same rows into the shipments table (baseline of recording)
//	BenchmarkCheckShipmentHandler (bench_unary_test.go) the unary handler in process, without gRPC
//
// Each reports records/s for one batch of benchRecords records per iteration. The registry
// is invented (user-assigned codes; no real country's status is implied) and its quotas are
// large enough never to run out.

const (
	benchRecords = 10000
	benchLicence = "XA-IMP-2026-801"
	benchCompany = "XA-8001"
)

// benchTemplates are everyday imports: cylinders of an HCFC, HFC blends by cylinder and in
// bulk (one with its HS code, one with a declared composition), a single HFC with its CAS
// and HS code. %s is the record key.
var benchTemplates = []string{
	"%s,import,XA-8001,XA-IMP-2026-801,XB,2026-06-15,HCFC-22,2903.71,75-45-6,,13.6,kg,10,servicing,,",
	"%s,import,XA-8001,XA-IMP-2026-801,XB,2026-06-16,R-404A,3827.61,,,10.9,kg,20,servicing,,",
	"%s,import,XA-8001,XA-IMP-2026-801,XC,2026-06-17,R-410A,,,,11.3,kg,40,servicing,,",
	"%s,import,XA-8001,XA-IMP-2026-801,XB,2026-06-18,R-404A,,,,2.5,t,0,servicing,,\"HFC-125=44;HFC-143a=52;HFC-134a=4\"",
	"%s,import,XA-8001,XA-IMP-2026-801,XC,2026-06-19,R-32,2903.42,75-10-5,,9,kg,30,servicing,,",
	"%s,import,XA-8001,XA-IMP-2026-801,XB,2026-06-20,R-134a,,,,30,lb,24,servicing,recycled,",
}

const benchHeader = "record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,declared_hs_code,declared_cas_number,declared_formula,total_net_quantity,quantity_unit,package_count,purpose,condition,declared_composition"

// benchCSV is a batch of n records whose keys start with prefix.
func benchCSV(n int, prefix string) []byte {
	var b bytes.Buffer
	b.Grow(n * 100)
	b.WriteString(benchHeader + "\n")
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, benchTemplates[i%len(benchTemplates)], fmt.Sprintf("%s%07d", prefix, i))
		b.WriteByte('\n')
	}
	return b.Bytes()
}

// parseAll reads every record of a CSV batch.
func parseAll(tb testing.TB, data []byte) []validate.Record {
	tb.Helper()
	rd, err := validate.NewCSVReader(bytes.NewReader(data))
	if err != nil {
		tb.Fatal(err)
	}
	var out []validate.Record
	for {
		r, le, err := rd.Next()
		if errors.Is(err, io.EOF) {
			return out
		}
		if err != nil || le != nil {
			tb.Fatalf("reading the benchmark batch: %v %v", err, le)
		}
		out = append(out, r)
	}
}

// benchServer is an in-process server on loopback over a fresh database with the benchmark
// registry.
type benchServer struct {
	conn *grpc.ClientConn
	st   *store.Store
	cat  *substances.Catalogue
}

func startBenchServer(tb testing.TB) *benchServer {
	tb.Helper()
	conn, st, holder := startServerWith(tb, service.Options{})
	benchRegistry(tb, conn)
	return &benchServer{conn: conn, st: st, cat: holder.Load()}
}

// benchRegistry loads the invented registry: reporting Party XA (Article 5, HFC Group 1),
// partners XB and XC, one company, one import licence with quotas that never run out.
func benchRegistry(tb testing.TB, conn *grpc.ClientConn) {
	tb.Helper()
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	bound := map[string]string{"C/I": "2000-01-01", "F/I": "2021-01-01", "F/II": "2021-01-01"}
	for _, p := range []*halovetv1.Party{
		{CountryCode: "XA", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, ReportingParty: true, BoundFrom: bound},
		{CountryCode: "XB", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, BoundFrom: bound},
		{CountryCode: "XC", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, BoundFrom: bound},
	} {
		if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: p}); err != nil {
			tb.Fatal(err)
		}
	}
	if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: benchCompany, Name: "Benchmark importer (invented)"}}); err != nil {
		tb.Fatal(err)
	}
	if _, err := lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Reason: "benchmark", Licence: &halovetv1.Licence{
		LicenceNumber: benchLicence, CompanyId: benchCompany, Directions: []halovetv1.Direction{halovetv1.Direction_DIRECTION_IMPORT},
		ValidFrom: "2026-01-01", ValidTo: "2026-12-31",
		QuotaLines: []*halovetv1.QuotaLine{
			{LineNumber: 1, AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "1000000000"},
			{LineNumber: 2, AnnexGroup: "F/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES, AllocatedAmount: "1000000000"}}}}); err != nil {
		tb.Fatal(err)
	}
}

// benchEnv builds the check environment the way the server does for each call: the catalogue
// snapshot the server loaded, the parties, the licence and the rulebook's allowed levels.
func (s *benchServer) benchEnv(tb testing.TB) *validate.Env {
	tb.Helper()
	ctx := context.Background()
	rb, err := controls.DefaultRulebook()
	if err != nil {
		tb.Fatal(err)
	}
	parties := map[string]validate.PartySettings{}
	ps, err := s.st.ListParties(ctx)
	if err != nil {
		tb.Fatal(err)
	}
	for _, p := range ps {
		set := validate.PartySettings{Type: p.PartyType, Known: true, BoundFrom: map[substances.Group]time.Time{}}
		for g, d := range p.BoundFrom {
			day, err := time.Parse("2006-01-02", d)
			if err != nil {
				tb.Fatal(err)
			}
			set.BoundFrom[substances.Group(g)] = day
		}
		parties[p.CountryCode] = set
	}
	lics, err := s.st.ListLicences(ctx, "", 0)
	if err != nil {
		tb.Fatal(err)
	}
	byNumber := map[string]*validate.Licence{}
	for _, l := range lics {
		v := &validate.Licence{Number: l.Number, CompanyID: l.CompanyID, ValidFrom: l.ValidFrom, ValidTo: l.ValidTo,
			Status: terms.LicenceActive, Directions: []terms.Direction{terms.DirectionImport}}
		for _, q := range l.QuotaLines {
			u := terms.QuotaODPTonnes
			if q.Unit == terms.QuotaCO2eTonnes {
				u = terms.QuotaCO2eTonnes
			}
			v.QuotaLines = append(v.QuotaLines, validate.QuotaLine{LineNumber: q.LineNumber, Group: substances.Group(q.AnnexGroup),
				Unit: u, Allocated: q.Allocated.Float64(), Drawn: q.Drawn.Float64()})
		}
		byNumber[l.Number] = v
	}
	party := controls.Party{Type: terms.PartyTypeArticle5, HFC: terms.HFCGroupA5Group1}
	env := validate.NewEnv(s.cat, "XA", parties, func(n string) (*validate.Licence, bool) { l, ok := byNumber[n]; return l, ok },
		func(g substances.Group, year int) (float64, bool) {
			a, err := rb.Allowance(party, controls.ScopeOf(g), year)
			if err != nil {
				return 0, false
			}
			return a.Percent(), true
		})
	if err := env.Validate(); err != nil {
		tb.Fatal(err)
	}
	return env
}

// reportRate reports records per second over the timed part of the benchmark, and, when
// the benchmark called startCPU before its loop, the CPU time this process spent per
// record meanwhile (user and system, every goroutine: client and server alike, not
// PostgreSQL's): on a machine shared with other work the wall-clock rate moves with the
// others' load, the CPU time per record much less.
func reportRate(b *testing.B, records int) {
	b.ReportMetric(float64(records)/b.Elapsed().Seconds(), "records/s")
	if cpuStart >= 0 && records > 0 {
		b.ReportMetric(float64(processCPU()-cpuStart)/float64(records), "cpu-ns/record")
		cpuStart = -1
	}
}

// cpuStart is the process CPU time when the running benchmark's loop began; -1 when none.
var cpuStart time.Duration = -1

// startCPU notes the process CPU time before a benchmark's loop, for reportRate.
func startCPU() { cpuStart = processCPU() }

// processCPU is the user and system CPU time of this process so far.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func BenchmarkParseCSVAlone(b *testing.B) {
	data := benchCSV(benchRecords, "P-")
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	total := 0
	startCPU()
	for b.Loop() {
		rd, err := validate.NewCSVReader(bytes.NewReader(data))
		if err != nil {
			b.Fatal(err)
		}
		for {
			_, le, err := rd.Next()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil || le != nil {
				b.Fatal(err, le)
			}
			total++
		}
	}
	reportRate(b, total)
}

func BenchmarkCheckInProcess(b *testing.B) {
	s := startBenchServer(b)
	env := s.benchEnv(b)
	recs := parseAll(b, benchCSV(benchRecords, "C-"))
	b.ReportAllocs()
	total := 0
	startCPU()
	for b.Loop() {
		batch := validate.NewBatch(env) // one per stream, as CheckShipments does
		for i := range recs {
			if v := batch.Check(&recs[i]); v.Outcome == validate.OutcomeRejected {
				b.Fatalf("record %s rejected: %v", recs[i].Key, v.Findings)
			}
		}
		total += len(recs)
	}
	reportRate(b, total)
}

// BenchmarkCheckAllInProcess is CheckInProcess with the records of each 256-record
// message checked by Batch.CheckAll, on every core, as CheckShipments does now.
func BenchmarkCheckAllInProcess(b *testing.B) {
	s := startBenchServer(b)
	env := s.benchEnv(b)
	recs := parseAll(b, benchCSV(benchRecords, "A-"))
	out := make([]validate.Verdict, 256)
	b.ReportAllocs()
	total := 0
	startCPU()
	for b.Loop() {
		batch := validate.NewBatch(env)
		for from := 0; from < len(recs); from += 256 {
			msg := recs[from:min(from+256, len(recs))]
			batch.CheckAll(msg, out[:len(msg)])
			for i := range msg {
				if out[i].Outcome == validate.OutcomeRejected {
					b.Fatalf("record %s rejected: %v", msg[i].Key, out[i].Findings)
				}
			}
		}
		total += len(recs)
	}
	reportRate(b, total)
}

// streamBatch parses data and streams it as the CLI does: a sender goroutine reads and
// sends, the caller receives the verdicts in order and the closing summary.
func streamBatch(b *testing.B, data []byte, send func([]*halovetv1.ShipmentRecord) error, closeSend func() error,
	recv func() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error)) *halovetv1.BatchSummary {
	sendErr := make(chan error, 1)
	go func() {
		rd, err := validate.NewCSVReader(bytes.NewReader(data))
		if err != nil {
			sendErr <- err
			return
		}
		// As the CLI does: several records per stream message.
		const perMessage = 256
		buf := make([]*halovetv1.ShipmentRecord, 0, perMessage)
		for {
			r, le, err := rd.Next()
			if errors.Is(err, io.EOF) {
				if len(buf) > 0 {
					if err := send(buf); err != nil {
						sendErr <- err
						return
					}
				}
				sendErr <- closeSend()
				return
			}
			if err != nil || le != nil {
				sendErr <- fmt.Errorf("%v %v", err, le)
				return
			}
			buf = append(buf, service.RecordToProto(&r))
			if len(buf) == perMessage {
				if err := send(buf); err != nil {
					sendErr <- err
					return
				}
				buf = make([]*halovetv1.ShipmentRecord, 0, perMessage)
			}
		}
	}()
	for n := 0; ; {
		vs, sum, err := recv()
		if err != nil {
			b.Fatalf("after %d verdicts: %v", n, err)
		}
		if sum != nil {
			if err := <-sendErr; err != nil {
				b.Fatal(err)
			}
			return sum
		}
		for _, v := range vs {
			n++
			if v.GetOutcome() == halovetv1.Outcome_OUTCOME_REJECTED {
				b.Fatalf("record %s rejected: %v", v.GetRecordKey(), v.GetFindings())
			}
		}
	}
}

func BenchmarkCheckStreamed(b *testing.B) {
	s := startBenchServer(b)
	client := halovetv1.NewShipmentServiceClient(s.conn)
	data := benchCSV(benchRecords, "S-")
	b.ReportAllocs()
	total := 0
	startCPU()
	for b.Loop() {
		stream, err := client.CheckShipments(context.Background())
		if err != nil {
			b.Fatal(err)
		}
		sum := streamBatch(b, data,
			func(r []*halovetv1.ShipmentRecord) error {
				return stream.Send(&halovetv1.CheckShipmentsRequest{Records: r})
			},
			stream.CloseSend,
			func() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error) {
				m, err := stream.Recv()
				if v := m.GetVerdict(); v != nil {
					return []*halovetv1.Verdict{v}, nil, err
				}
				return m.GetVerdicts().GetVerdicts(), m.GetSummary(), err
			})
		if sum.GetRecords() != benchRecords {
			b.Fatalf("summary of %d records; want %d", sum.GetRecords(), benchRecords)
		}
		total += benchRecords
	}
	reportRate(b, total)
}

// BenchmarkCheckUnary sends the records of BenchmarkCheckStreamed's batch one per unary
// CheckShipment call, in turn, and reports records (calls) per second: the per-record
// cost of a unary check beside the streamed one.
func BenchmarkCheckUnary(b *testing.B) {
	s := startBenchServer(b)
	client := halovetv1.NewShipmentServiceClient(s.conn)
	recs := parseAll(b, benchCSV(benchRecords, "U-"))
	reqs := make([]*halovetv1.CheckShipmentRequest, len(recs))
	for i := range recs {
		reqs[i] = &halovetv1.CheckShipmentRequest{Record: service.RecordToProto(&recs[i])}
	}
	ctx := context.Background()
	b.ReportAllocs()
	total := 0
	for i := 0; b.Loop(); i++ {
		resp, err := client.CheckShipment(ctx, reqs[i%len(reqs)])
		if err != nil {
			b.Fatal(err)
		}
		if resp.GetVerdict().GetOutcome() == halovetv1.Outcome_OUTCOME_REJECTED {
			b.Fatalf("record %s rejected: %v", resp.GetVerdict().GetRecordKey(), resp.GetVerdict().GetFindings())
		}
		total++
	}
	reportRate(b, total)
}

func BenchmarkRecordStreamed(b *testing.B) {
	s := startBenchServer(b)
	client := halovetv1.NewShipmentServiceClient(s.conn) // dialled without the answer scan, as every benchmark
	b.ReportAllocs()
	total := 0
	for i := 0; b.Loop(); i++ {
		b.StopTimer()
		data := benchCSV(benchRecords, fmt.Sprintf("R%d-", i)) // fresh keys: every record is stored
		b.StartTimer()
		stream, err := client.RecordShipments(context.Background())
		if err != nil {
			b.Fatal(err)
		}
		sum := streamBatch(b, data,
			func(r []*halovetv1.ShipmentRecord) error {
				return stream.Send(&halovetv1.RecordShipmentsRequest{Records: r})
			},
			stream.CloseSend,
			func() ([]*halovetv1.Verdict, *halovetv1.BatchSummary, error) {
				m, err := stream.Recv()
				if v := m.GetVerdict(); v != nil {
					return []*halovetv1.Verdict{v}, nil, err
				}
				return m.GetVerdicts().GetVerdicts(), m.GetSummary(), err
			})
		if sum.GetRecorded() != benchRecords {
			b.Fatalf("%d records recorded; want %d", sum.GetRecorded(), benchRecords)
		}
		total += benchRecords
	}
	reportRate(b, total)
}

// copyRows builds the rows the recorder would store for the batch: the checked figures,
// the record as protobuf JSON, as the service stores them.
func copyRows(b *testing.B, env *validate.Env, data []byte) []store.ShipmentRow {
	recs := parseAll(b, data)
	rows := make([]store.ShipmentRow, len(recs))
	for i := range recs {
		r := &recs[i]
		v := validate.Check(env, r, nil)
		js, err := protojson.Marshal(service.RecordToProto(r))
		if err != nil {
			b.Fatal(err)
		}
		date, err := validate.ParseDate(r.DeclarationDate)
		if err != nil {
			b.Fatal(err)
		}
		f := &v.Figures
		rows[i] = store.ShipmentRow{CompanyID: r.CompanyID, RecordKey: r.Key, Fingerprint: v.Fingerprint,
			Direction: r.Direction, LicenceNumber: r.LicenceNumber, PartnerCountry: strings.ToUpper(r.PartnerCountry),
			DeclarationDate: date, ResolvedDesignation: f.Designation, EntryKind: "substance", Purpose: r.Purpose,
			Condition: r.Condition, NetMassKg: store.ToNano(f.NetMassKg), ODPTonnes: store.ToNano(f.ODPTonnes),
			CO2eTonnes: store.ToNano(f.CO2eTonnes), CountsInConsumption: f.CountsInConsumption, RecordJSON: js}
		if f.Kind == substances.KindBlend {
			rows[i].EntryKind = "blend"
		}
	}
	return rows
}

// copyShipments writes rows with one plain COPY into the shipments table and nothing
// else: no checks, no locks, no quota; the baseline of the recording benchmark.
func copyShipments(ctx context.Context, st *store.Store, rows []store.ShipmentRow, firstID int64) error {
	cols := []string{"shipment_id", "company_id", "record_key", "fingerprint", "direction",
		"licence_number", "partner_country", "declaration_date", "year", "resolved_designation", "entry_kind",
		"purpose", "condition", "net_mass_kg", "odp_tonnes", "co2e_tonnes", "counts_in_consumption",
		"partner_non_party", "record"}
	numeric := func(n store.Nano) pgtype.Numeric {
		return pgtype.Numeric{Int: big.NewInt(int64(n)), Exp: -9, Valid: true}
	}
	_, err := st.Pool().CopyFrom(ctx, pgx.Identifier{"shipments"}, cols,
		pgx.CopyFromSlice(len(rows), func(j int) ([]any, error) {
			r := &rows[j]
			return []any{firstID + int64(j), r.CompanyID, r.RecordKey, r.Fingerprint, r.Direction, r.LicenceNumber, r.PartnerCountry,
				r.DeclarationDate, r.DeclarationDate.Year(), r.ResolvedDesignation, r.EntryKind, r.Purpose, r.Condition,
				numeric(r.NetMassKg), numeric(r.ODPTonnes), numeric(r.CO2eTonnes), r.CountsInConsumption,
				r.PartnerNonParty, string(r.RecordJSON)}, nil
		}))
	return err
}

func BenchmarkCopyBaseline(b *testing.B) {
	s := startBenchServer(b)
	env := s.benchEnv(b)
	ctx := context.Background()
	b.ReportAllocs()
	total := 0
	nextID := int64(1_000_000_000)
	for i := 0; b.Loop(); i++ {
		b.StopTimer()
		rows := copyRows(b, env, benchCSV(benchRecords, fmt.Sprintf("B%d-", i)))
		b.StartTimer()
		if err := copyShipments(ctx, s.st, rows, nextID); err != nil {
			b.Fatal(err)
		}
		nextID += int64(len(rows))
		total += len(rows)
	}
	reportRate(b, total)
}

// BenchmarkUnaryConcurrent drives unary calls with 50 in flight on one loopback connection
// (b.RunParallel, parallelism 50 / GOMAXPROCS), as make bench-load does across processes:
// the health check (the ceiling), ResolveIdentifier (the aim's baseline) and CheckShipment
// with the batch's records in turn. In process, so that -cpuprofile, -blockprofile and
// -mutexprofile see the server. Reports calls/s and the 99th percentile latency.
func BenchmarkUnaryConcurrent(b *testing.B) {
	s := startBenchServer(b)
	recs := parseAll(b, benchCSV(600, "Q-"))
	reqs := make([]*halovetv1.CheckShipmentRequest, len(recs))
	for i := range recs {
		reqs[i] = &halovetv1.CheckShipmentRequest{Record: service.RecordToProto(&recs[i])}
	}
	ship := halovetv1.NewShipmentServiceClient(s.conn)
	cat := halovetv1.NewCatalogueServiceClient(s.conn)
	health := healthpb.NewHealthClient(s.conn)
	calls := []struct {
		name string
		call func(ctx context.Context, i int) error
	}{
		{"Health", func(ctx context.Context, _ int) error {
			_, err := health.Check(ctx, &healthpb.HealthCheckRequest{})
			return err
		}},
		{"ResolveIdentifier", func(ctx context.Context, _ int) error {
			_, err := cat.ResolveIdentifier(ctx, &halovetv1.ResolveIdentifierRequest{Identifier: "hcfc 22"})
			return err
		}},
		{"CheckShipment", func(ctx context.Context, i int) error {
			resp, err := ship.CheckShipment(ctx, reqs[i%len(reqs)])
			if err == nil && resp.GetVerdict().GetOutcome() == halovetv1.Outcome_OUTCOME_REJECTED {
				err = fmt.Errorf("record %s rejected: %v", resp.GetVerdict().GetRecordKey(), resp.GetVerdict().GetFindings())
			}
			return err
		}},
	}
	for _, c := range calls {
		b.Run(c.name, func(b *testing.B) {
			b.SetParallelism(max(1, 50/runtime.GOMAXPROCS(0)))
			var mu sync.Mutex
			var lat []time.Duration
			var seq atomic.Int64
			b.ReportAllocs()
			b.RunParallel(func(pb *testing.PB) {
				ctx := context.Background()
				var mine []time.Duration
				for pb.Next() {
					t0 := time.Now()
					if err := c.call(ctx, int(seq.Add(1))); err != nil {
						b.Error(err)
						return
					}
					mine = append(mine, time.Since(t0))
				}
				mu.Lock()
				lat = append(lat, mine...)
				mu.Unlock()
			})
			if len(lat) == 0 {
				return
			}
			slices.Sort(lat)
			b.ReportMetric(float64(len(lat))/b.Elapsed().Seconds(), "calls/s")
			b.ReportMetric(float64(lat[min(len(lat)-1, len(lat)*99/100)].Microseconds())/1000, "p99-ms")
		})
	}
}
