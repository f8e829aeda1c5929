package service_test

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net"
	"slices"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials/insecure"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/store"
)

// Two servers on one database, as two replicas run: a change to a licence or a party made
// through one is seen by the other's next unary check and by the next message of a stream
// the other has had open since before the change, and it is still seen when the other's
// notification connection was cut while the change was made.
//
// The register is INVENTED (user-assigned codes XA, XB; no real country's status is
// implied): reporting Party XA (Article 5), partner XB (non-Article 5), both bound by
// Annex C Group I; one import licence with an Annex C/I line in ODP tonnes. The record is
// 100 kg of HCFC-22 (Annex C Group I, ODP 0.055 per Montreal Protocol Annex C: 0.0055 ODP t).

var registerNow = func() time.Time { return time.Date(2026, 7, 1, 12, 0, 0, 0, time.UTC) }

// startSecondServer runs a second halovet server on the database st is open on, with its own
// store (pool), catalogue holder (watched, as halovet serve watches it) and check
// environment, and returns a client connection.
func startSecondServer(t *testing.T, st *store.Store) (*grpc.ClientConn, *store.Store) {
	t.Helper()
	ctx := context.Background()
	rst, err := store.Open(ctx, st.Pool().Config().ConnString())
	if err != nil {
		t.Fatalf("open a second store on the test database: %v", err)
	}
	t.Cleanup(rst.Close)
	cat, err := service.LoadCatalogue(ctx, rst, quietLogger())
	if err != nil {
		t.Fatal(err)
	}
	// As halovet serve runs a replica: the catalogue follows its announcements too.
	t.Cleanup(cat.Watch(ctx, rst))
	srv := service.New(rst, cat, service.Options{Logger: quietLogger(), GracePeriod: 5 * time.Second, Now: registerNow, OpenAccess: true})
	lis, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	serveCtx, cancel := context.WithCancel(context.Background())
	served := make(chan error, 1)
	go func() { served <- srv.Serve(serveCtx, lis) }()
	t.Cleanup(func() {
		cancel()
		select {
		case err := <-served:
			if err != nil && !errors.Is(err, net.ErrClosed) {
				t.Errorf("replica Serve: %v", err)
			}
		case <-time.After(15 * time.Second):
			t.Errorf("replica did not stop within 15 s")
		}
	})
	conn, err := grpc.NewClient(lis.Addr().String(), grpc.WithTransportCredentials(insecure.NewCredentials()))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = conn.Close() })
	return conn, rst
}

const (
	regLicence = "XA-IMP-2026-701"
	regCompany = "XA-7001"
)

func registerParties() []*halovetv1.Party {
	bound := map[string]string{"C/I": "2000-01-01"}
	return []*halovetv1.Party{
		{CountryCode: "XA", Name: "Xandria (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, ReportingParty: true, BoundFrom: bound},
		{CountryCode: "XB", Name: "Borealia (invented)", PartyType: halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5, HfcGroup: halovetv1.HfcGroup_HFC_GROUP_NON_A5, BoundFrom: bound},
	}
}

func registerLicence(dirs ...halovetv1.Direction) *halovetv1.Licence {
	return &halovetv1.Licence{LicenceNumber: regLicence, CompanyId: regCompany, Directions: dirs,
		ValidFrom: "2026-01-01", ValidTo: "2026-12-31",
		QuotaLines: []*halovetv1.QuotaLine{{LineNumber: 1, AnnexGroup: "C/I", Unit: halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, AllocatedAmount: "10"}}}
}

// loadRegister writes the invented register through conn.
func loadRegister(t *testing.T, conn *grpc.ClientConn) {
	t.Helper()
	ctx := context.Background()
	lic := halovetv1.NewLicensingServiceClient(conn)
	for _, p := range registerParties() {
		if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: p}); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: regCompany, Name: "Register test importer (invented)", CountryCode: "XA"}}); err != nil {
		t.Fatal(err)
	}
	if _, err := lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Reason: "test", Licence: registerLicence(halovetv1.Direction_DIRECTION_IMPORT)}); err != nil {
		t.Fatal(err)
	}
}

func registerRecord(key string) *halovetv1.ShipmentRecord {
	return &halovetv1.ShipmentRecord{RecordKey: key, Direction: halovetv1.Direction_DIRECTION_IMPORT, CompanyId: regCompany,
		LicenceNumber: regLicence, PartnerCountry: "XB", DeclarationDate: "2026-06-15", Substance: "HCFC-22",
		TotalNetQuantity: "100", QuantityUnit: "kg"}
}

func findingCodes(v *halovetv1.Verdict) []string {
	var out []string
	for _, f := range v.GetFindings() {
		out = append(out, f.GetCode())
	}
	return out
}

// within polls check every 20 ms for up to limit and fails the test with what the last
// poll saw when it never holds.
func within(t *testing.T, limit time.Duration, what string, check func() (bool, string)) {
	t.Helper()
	start := time.Now()
	for {
		ok, seen := check()
		if ok {
			t.Logf("%s after %v", what, time.Since(start).Round(time.Millisecond))
			return
		}
		if time.Since(start) > limit {
			t.Fatalf("%s: not within %v; last seen %s", what, limit, seen)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// unaryHas checks the record on conn and reports whether the verdict carries code
// (want true) or is accepted (code "").
func unaryHas(t *testing.T, conn *grpc.ClientConn, code string) (bool, string) {
	t.Helper()
	resp, err := halovetv1.NewShipmentServiceClient(conn).CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: registerRecord("U-1")})
	if err != nil {
		t.Fatalf("CheckShipment: %v", err)
	}
	v := resp.GetVerdict()
	if code == "" {
		return v.GetOutcome() == halovetv1.Outcome_OUTCOME_ACCEPTED, v.GetOutcome().String() + " " + joinCodes(v)
	}
	return slices.Contains(findingCodes(v), code), v.GetOutcome().String() + " " + joinCodes(v)
}

func joinCodes(v *halovetv1.Verdict) string {
	s := "["
	for i, c := range findingCodes(v) {
		if i > 0 {
			s += " "
		}
		s += c
	}
	return s + "]"
}

func TestRegisterChangesReachTheOtherReplica(t *testing.T) {
	connA, st, _ := startServerWith(t, service.Options{Now: registerNow})
	ctx := context.Background()
	loadRegister(t, connA)
	connB, _ := startSecondServer(t, st)

	if ok, seen := unaryHas(t, connB, ""); !ok {
		t.Fatalf("replica B before any change: %s; want accepted", seen)
	}
	shipB := halovetv1.NewShipmentServiceClient(connB)
	check, err := shipB.CheckShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	record, err := shipB.RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	nextKey := func() string { n++; return "S-" + string(rune('A'+n/26)) + string(rune('a'+n%26)) }
	// streamCheck sends one message of two records on the open check stream.
	streamCheck := func() []*halovetv1.Verdict {
		t.Helper()
		if err := check.Send(&halovetv1.CheckShipmentsRequest{Records: []*halovetv1.ShipmentRecord{registerRecord(nextKey()), registerRecord(nextKey())}}); err != nil {
			t.Fatal(err)
		}
		m, err := check.Recv()
		if err != nil {
			t.Fatal(err)
		}
		return m.GetVerdicts().GetVerdicts()
	}
	// streamRecord sends one record on the open recording stream.
	streamRecord := func() *halovetv1.Verdict {
		t.Helper()
		if err := record.Send(&halovetv1.RecordShipmentsRequest{Record: registerRecord(nextKey())}); err != nil {
			t.Fatal(err)
		}
		m, err := record.Recv()
		if err != nil {
			t.Fatal(err)
		}
		return m.GetVerdict()
	}
	for _, v := range streamCheck() {
		if v.GetOutcome() != halovetv1.Outcome_OUTCOME_ACCEPTED {
			t.Fatalf("open check stream before the change: %s; want accepted", joinCodes(v))
		}
	}
	if v := streamRecord(); !v.GetRecorded() {
		t.Fatalf("open recording stream before the change: %s, not recorded", joinCodes(v))
	}

	// 1. The licence is amended through A to cover exports only.
	lic := halovetv1.NewLicensingServiceClient(connA)
	if _, err := lic.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Reason: "exports only", Licence: registerLicence(halovetv1.Direction_DIRECTION_EXPORT)}); err != nil {
		t.Fatal(err)
	}
	if ok, seen := unaryHas(t, connA, "LICENCE_DIRECTION"); !ok {
		t.Errorf("server A's next check after its own amendment: %s; want LICENCE_DIRECTION", seen)
	}
	within(t, 5*time.Second, "replica B's unary check sees the amended direction", func() (bool, string) {
		return unaryHas(t, connB, "LICENCE_DIRECTION")
	})
	within(t, 5*time.Second, "replica B's open check stream sees the amended direction", func() (bool, string) {
		vs := streamCheck()
		return len(vs) == 2 && slices.Contains(findingCodes(vs[0]), "LICENCE_DIRECTION") && slices.Contains(findingCodes(vs[1]), "LICENCE_DIRECTION"), joinCodes(vs[0])
	})
	within(t, 5*time.Second, "replica B's open recording stream no longer records against the amended licence", func() (bool, string) {
		v := streamRecord()
		return !v.GetRecorded() && slices.Contains(findingCodes(v), "LICENCE_DIRECTION"), joinCodes(v)
	})

	// 2. Back to imports, then the partner XB is set as a non-party through A.
	if _, err := lic.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Reason: "imports again", Licence: registerLicence(halovetv1.Direction_DIRECTION_IMPORT)}); err != nil {
		t.Fatal(err)
	}
	within(t, 5*time.Second, "replica B's unary check sees the licence restored", func() (bool, string) { return unaryHas(t, connB, "") })
	xb := registerParties()[1]
	xb.PartyType = halovetv1.PartyType_PARTY_TYPE_NON_PARTY
	xb.BoundFrom = nil
	if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: xb}); err != nil {
		t.Fatal(err)
	}
	within(t, 5*time.Second, "replica B's unary check sees the partner as a non-party", func() (bool, string) {
		return unaryHas(t, connB, "PARTNER_NON_PARTY")
	})
	within(t, 5*time.Second, "replica B's open check stream sees the partner as a non-party", func() (bool, string) {
		vs := streamCheck()
		return len(vs) == 2 && slices.Contains(findingCodes(vs[0]), "PARTNER_NON_PARTY"), joinCodes(vs[0])
	})

	if err := check.CloseSend(); err != nil {
		t.Fatal(err)
	}
	if err := record.CloseSend(); err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := check.Recv(); err != nil {
			if !errors.Is(err, io.EOF) {
				t.Errorf("closing the check stream: %v", err)
			}
			break
		}
	}
	for {
		if _, err := record.Recv(); err != nil {
			if !errors.Is(err, io.EOF) {
				t.Errorf("closing the recording stream: %v", err)
			}
			break
		}
	}
}

// listeners counts the sessions of the test database listening on each channel.
func listeners(t *testing.T, st *store.Store) (register, catalogue int) {
	t.Helper()
	err := st.Pool().QueryRow(context.Background(), `SELECT
	        count(*) FILTER (WHERE query = 'LISTEN halovet_register'),
	        count(*) FILTER (WHERE query = 'LISTEN halovet_catalogue')
	    FROM pg_stat_activity WHERE datname = current_database() AND pid <> pg_backend_pid()`).Scan(&register, &catalogue)
	if err != nil {
		t.Fatalf("look for the listeners: %v", err)
	}
	return register, catalogue
}

// TestReplicaReloadsAfterItsListenerIsCut cuts every notification connection of the
// database (pg_terminate_backend), changes a licence and a catalogue substance through
// server A while nobody listens, so that their announcements reach no one, and requires
// replica B to have both changes within a bounded wait all the same: each listener
// reloads its snapshot when it connects again.
func TestReplicaReloadsAfterItsListenerIsCut(t *testing.T) {
	connA, st, _ := startServerWith(t, service.Options{Now: registerNow})
	ctx := context.Background()
	loadRegister(t, connA)
	connB, _ := startSecondServer(t, st)
	catB := halovetv1.NewCatalogueServiceClient(connB)
	if got := catalogueHFC134a(t, catB).GetLifetimeYears(); got != catalogueSeedLifetime {
		t.Fatalf("replica B's HFC-134a lifetime before the change: %v; want %v", got, catalogueSeedLifetime)
	}
	if ok, seen := unaryHas(t, connB, ""); !ok {
		t.Fatalf("replica B before the change: %s; want accepted", seen)
	}
	within(t, 10*time.Second, "both servers listen for register changes and B for catalogue changes", func() (bool, string) {
		r, c := listeners(t, st)
		return r >= 2 && c >= 1, fmt.Sprintf("%d register and %d catalogue listeners", r, c)
	})

	var cut int
	if err := st.Pool().QueryRow(ctx, `SELECT count(pg_terminate_backend(pid)) FROM pg_stat_activity
	    WHERE datname = current_database() AND query IN ('LISTEN halovet_register', 'LISTEN halovet_catalogue')`).Scan(&cut); err != nil {
		t.Fatalf("cut the listeners: %v", err)
	}
	if cut < 3 {
		t.Fatalf("%d listener sessions cut; want at least 3", cut)
	}
	within(t, 5*time.Second, "the cut sessions are gone", func() (bool, string) {
		r, c := listeners(t, st)
		return r == 0 && c == 0, fmt.Sprintf("%d register and %d catalogue listeners", r, c)
	})

	lic := halovetv1.NewLicensingServiceClient(connA)
	if _, err := lic.SetLicenceStatus(ctx, &halovetv1.SetLicenceStatusRequest{LicenceNumber: regLicence,
		Status: halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED, Reason: "test: suspended while the listeners are cut", EffectiveDate: "2026-01-01"}); err != nil {
		t.Fatal(err)
	}
	catA := halovetv1.NewCatalogueServiceClient(connA)
	if _, err := catA.UpsertSubstance(ctx, &halovetv1.UpsertSubstanceRequest{
		Substance: catalogueLifetimeCorrection(catalogueHFC134a(t, catA)), Reason: "use the AR5 lifetime"}); err != nil {
		t.Fatal(err)
	}
	if r, c := listeners(t, st); r != 0 || c != 0 {
		t.Fatalf("%d register and %d catalogue listeners were back before both changes were committed; "+
			"their announcements may have been delivered, so the reload on reconnection is not what this run tests", r, c)
	}

	within(t, 15*time.Second, "replica B's unary check sees the suspension made while its listener was cut", func() (bool, string) {
		return unaryHas(t, connB, "LICENCE_INACTIVE")
	})
	within(t, 15*time.Second, "replica B's catalogue has the correction made while its listener was cut", func() (bool, string) {
		got := catalogueHFC134a(t, catB).GetLifetimeYears()
		return got == catalogueCorrectedLifetime, fmt.Sprintf("lifetime %v", got)
	})
}

// A recording stream open on replica B since before each change judges its next record on
// the licence's terms as amended through A (scope, company, validity, direction) and on the
// partner's status as changed through A; a stream B opens after the change sees it from
// its first record. Codes: LICENCE_SCOPE, LICENCE_COMPANY, LICENCE_EXPIRED,
// LICENCE_DIRECTION, PARTNER_NON_PARTY (validate/codes.go).
func TestAmendmentsReachAnOpenRecordingStreamOnTheOtherReplica(t *testing.T) {
	connA, st, _ := startServerWith(t, service.Options{Now: registerNow})
	ctx := context.Background()
	loadRegister(t, connA)
	lic := halovetv1.NewLicensingServiceClient(connA)
	if _, err := lic.RegisterCompany(ctx, &halovetv1.RegisterCompanyRequest{Company: &halovetv1.Company{CompanyId: "XA-7002", Name: "Second importer (invented)", CountryCode: "XA"}}); err != nil {
		t.Fatal(err)
	}
	// A second licence of the same company, for the stream's first record: the amended
	// licence keeps no draws, so that its scope, company and validity may be amended.
	other := registerLicence(halovetv1.Direction_DIRECTION_IMPORT)
	other.LicenceNumber = "XA-IMP-2026-702"
	if _, err := lic.IssueLicence(ctx, &halovetv1.IssueLicenceRequest{Reason: "test", Licence: other}); err != nil {
		t.Fatal(err)
	}
	connB, _ := startSecondServer(t, st)
	shipB := halovetv1.NewShipmentServiceClient(connB)
	record, err := shipB.RecordShipments(ctx)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	streamRecordOn := func(licence string) *halovetv1.Verdict {
		t.Helper()
		n++
		r := registerRecord(fmt.Sprintf("R-%d", n))
		r.LicenceNumber = licence
		if err := record.Send(&halovetv1.RecordShipmentsRequest{Record: r}); err != nil {
			t.Fatal(err)
		}
		m, err := record.Recv()
		if err != nil {
			t.Fatal(err)
		}
		return m.GetVerdict()
	}
	streamRecord := func() *halovetv1.Verdict { t.Helper(); return streamRecordOn(regLicence) }
	// newStreamHas checks the record as the first of a stream B opens now.
	newStreamHas := func(code string) (bool, string) {
		s, err := shipB.CheckShipments(ctx)
		if err != nil {
			t.Fatal(err)
		}
		if err := s.Send(&halovetv1.CheckShipmentsRequest{Record: registerRecord("N-1")}); err != nil {
			t.Fatal(err)
		}
		m, err := s.Recv()
		if err != nil {
			t.Fatal(err)
		}
		_ = s.CloseSend()
		for {
			if _, err := s.Recv(); err != nil {
				break
			}
		}
		v := m.GetVerdict()
		return slices.Contains(findingCodes(v), code), joinCodes(v)
	}
	amend := func(why string, l *halovetv1.Licence) {
		t.Helper()
		if _, err := lic.AmendLicence(ctx, &halovetv1.AmendLicenceRequest{Reason: why, Licence: l}); err != nil {
			t.Fatalf("amend (%s): %v", why, err)
		}
	}
	if v := streamRecordOn(other.LicenceNumber); !v.GetRecorded() {
		t.Fatalf("open recording stream before any change: %s, not recorded", joinCodes(v))
	}
	scope := registerLicence(halovetv1.Direction_DIRECTION_IMPORT)
	scope.QuotaLines[0].AnnexGroup = "A/I" // HCFC-22 is Annex C Group I: no line covers it now
	company := registerLicence(halovetv1.Direction_DIRECTION_IMPORT)
	company.CompanyId = "XA-7002"
	validity := registerLicence(halovetv1.Direction_DIRECTION_IMPORT)
	validity.ValidTo = "2026-06-01" // the record is declared on 2026-06-15
	changes := []struct {
		name, code string
		licence    *halovetv1.Licence
	}{
		{"scope", "LICENCE_SCOPE", scope},
		{"company", "LICENCE_COMPANY", company},
		{"validity", "LICENCE_EXPIRED", validity},
		{"direction", "LICENCE_DIRECTION", registerLicence(halovetv1.Direction_DIRECTION_EXPORT)},
	}
	for _, c := range changes {
		amend(c.name, c.licence)
		// Once B has the announcement (its unary check sees it), the very next record of
		// the stream B opened before the change is judged on the new terms, and so is the
		// first record of a stream B opens now.
		within(t, 5*time.Second, "replica B's unary check sees the amended "+c.name, func() (bool, string) { return unaryHas(t, connB, c.code) })
		if v := streamRecord(); v.GetRecorded() || !slices.Contains(findingCodes(v), c.code) {
			t.Errorf("replica B's open recording stream after the amended %s: recorded %v %s; want not recorded, %s", c.name, v.GetRecorded(), joinCodes(v), c.code)
		}
		if ok, seen := newStreamHas(c.code); !ok {
			t.Errorf("a stream replica B opens after the amended %s: %s; want %s", c.name, seen, c.code)
		}
		amend("restored after "+c.name, registerLicence(halovetv1.Direction_DIRECTION_IMPORT))
		within(t, 5*time.Second, "replica B's unary check accepts again after the "+c.name+" is restored", func() (bool, string) { return unaryHas(t, connB, "") })
	}
	xb := registerParties()[1]
	xb.PartyType = halovetv1.PartyType_PARTY_TYPE_NON_PARTY
	xb.BoundFrom = nil
	if _, err := lic.PutParty(ctx, &halovetv1.PutPartyRequest{Party: xb}); err != nil {
		t.Fatal(err)
	}
	within(t, 5*time.Second, "replica B's unary check sees the partner as a non-party", func() (bool, string) { return unaryHas(t, connB, "PARTNER_NON_PARTY") })
	if v := streamRecord(); !slices.Contains(findingCodes(v), "PARTNER_NON_PARTY") {
		t.Errorf("replica B's open recording stream after the party change: %s; want PARTNER_NON_PARTY", joinCodes(v))
	}
	if ok, seen := newStreamHas("PARTNER_NON_PARTY"); !ok {
		t.Errorf("a stream replica B opens after the party change: %s; want PARTNER_NON_PARTY", seen)
	}
	if err := record.CloseSend(); err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := record.Recv(); err != nil {
			if !errors.Is(err, io.EOF) {
				t.Errorf("closing the recording stream: %v", err)
			}
			break
		}
	}
}
