package service_test

import (
	"context"
	"encoding/json"
	"fmt"
	"github.com/halovet/halovet/terms"
	"net/http"
	"net/url"
	"slices"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protoreflect"
	"google.golang.org/protobuf/reflect/protoregistry"

	"github.com/halovet/halovet/access"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

// pagedCase is how the paging test fills one list: seed adds the row of sort place n
// (0 to 99; rows of lists ordered by a key sort by n, so that rows added between two pages
// land before, inside and after what was read), refilter changes the filters of a
// request (nil for a list without filters), and rows names the response's paged field.
type pagedCase struct {
	rows     protoreflect.Name
	req      func() proto.Message
	seed     func(t *testing.T, env pagedEnv, n int)
	refilter func(proto.Message)
}

type pagedEnv struct {
	conn *grpc.ClientConn
	st   *store.Store
}

// All test data are invented (demo register from shipRegistry and rows named PG-…).
var pagedCases = map[string]pagedCase{
	"CatalogueService/ListEntries": {rows: "entries",
		req:      func() proto.Message { return &halovetv1.ListEntriesRequest{} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListEntriesRequest).AnnexGroup = "C/I" }},
	"LicensingService/ListParties": {rows: "parties",
		req: func() proto.Message { return &halovetv1.ListPartiesRequest{} },
		seed: func(t *testing.T, e pagedEnv, n int) {
			code := string(rune('A'+n/26)) + string(rune('A'+n%26))
			must(t, e.st.PutParty(context.Background(), store.Party{CountryCode: code, Name: "Invented " + code, PartyType: terms.PartyTypeNonParty}))
		}},
	"LicensingService/ListCompanies": {rows: "companies",
		req: func() proto.Message { return &halovetv1.ListCompaniesRequest{} },
		seed: func(t *testing.T, e pagedEnv, n int) {
			must(t, e.st.PutCompany(context.Background(), store.Company{CompanyID: fmt.Sprintf("PG-%02d", n), Name: "Invented", CountryCode: "XA"}))
		}},
	"LicensingService/ListLicences": {rows: "licences",
		req:      func() proto.Message { return &halovetv1.ListLicencesRequest{Year: 2026} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListLicencesRequest).CompanyId = shipCompany },
		seed: func(t *testing.T, e pagedEnv, n int) {
			must(t, e.st.IssueLicence(context.Background(), store.Licence{Number: fmt.Sprintf("PG-%02d", n), CompanyID: shipCompany,
				Directions: []terms.Direction{terms.DirectionImport}, ValidFrom: time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC), ValidTo: time.Date(2026, 12, 31, 0, 0, 0, 0, time.UTC),
				Status: terms.LicenceActive, QuotaLines: []store.QuotaLine{{LineNumber: 1, AnnexGroup: "C/I", Unit: terms.QuotaODPTonnes, Allocated: num("1")}}}, "test"))
		}},
	"LicensingService/ListLicenceHistory": {rows: "events",
		req:      func() proto.Message { return &halovetv1.ListLicenceHistoryRequest{LicenceNumber: shipLicence} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListLicenceHistoryRequest).LicenceNumber = shipSuspended },
		// Events are appended in order; each seed is the next status change, a day later.
		seed: func(t *testing.T, e pagedEnv, _ int) {
			l, err := e.st.GetLicence(context.Background(), shipLicence)
			must(t, err)
			k := len(l.StatusHistory)
			s := terms.LicenceSuspended
			if l.Status == terms.LicenceSuspended {
				s = terms.LicenceActive
			}
			_, err = e.st.SetLicenceStatus(context.Background(), store.StatusChange{Number: shipLicence, Status: s,
				EffectiveOn: time.Date(2026, 2, 1+k, 0, 0, 0, 0, time.UTC), Reason: "test"})
			must(t, err)
		}},
	"ConsumptionService/ListNationalEntries": {rows: "entries",
		req:      func() proto.Message { return &halovetv1.ListNationalEntriesRequest{} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListNationalEntriesRequest).Year = 2003 },
		seed: func(t *testing.T, e pagedEnv, n int) {
			must(t, e.st.PutNationalEntries(context.Background(), []store.NationalEntry{{Key: fmt.Sprintf("PG-%02d", n), Year: 2000 + n/10,
				Type: store.EntryProduction, Substance: "HCFC-22", Tonnes: num("1")}}))
		}},
	"ConsumptionService/ListExemptions": {rows: "exemptions",
		req:      func() proto.Message { return &halovetv1.ListExemptionsRequest{} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListExemptionsRequest).Year = 2003 },
		seed: func(t *testing.T, e pagedEnv, n int) {
			must(t, e.st.PutExemptions(context.Background(), []store.Exemption{{Key: fmt.Sprintf("PG-%02d", n), CountryCode: "XA",
				Year: 2000 + n/10, Scope: "C/I", Use: "laboratory", Amount: num("1"), Unit: "ODP t", Source: "invented for the test"}}))
		}},
	"ConsumptionService/ListOfficialFigures": {rows: "figures",
		req: func() proto.Message { return &halovetv1.ListOfficialFiguresRequest{} },
		seed: func(t *testing.T, e pagedEnv, n int) {
			must(t, e.st.PutOfficialFigures(context.Background(), []store.OfficialFigure{{Key: fmt.Sprintf("PG-%02d", n), CountryCode: "XA",
				Kind: "limit", Scope: "C/I", Year: 2000 + n, Value: num("1"), Unit: "ODP t", Source: "invented for the test"}}))
		}},
	"ConsumptionService/ListHfc23Entries": {rows: "entries",
		req:      func() proto.Message { return &halovetv1.ListHfc23EntriesRequest{} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListHfc23EntriesRequest).Year = 2023 },
		seed: func(t *testing.T, e pagedEnv, n int) {
			must(t, e.st.PutHFC23Entries(context.Background(), []store.HFC23Entry{{Key: fmt.Sprintf("PG-%02d", n),
				Facility: fmt.Sprintf("PG-PLANT-%02d", n), Year: 2020 + n/10, Generated: num("1"), Destroyed: num("1")}}))
		}},
	"ShipmentService/ListShipments": {rows: "shipments",
		req:      func() proto.Message { return &halovetv1.ListShipmentsRequest{} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListShipmentsRequest).PartnerCountry = "XB" },
		seed: func(t *testing.T, e pagedEnv, n int) {
			vs, _ := shipRecordCall(t, halovetv1.NewShipmentServiceClient(e.conn), shipRecord(fmt.Sprintf("PG-%02d", n)))
			if !vs[0].GetRecorded() {
				t.Fatalf("shipment PG-%02d not recorded: %v", n, vs[0])
			}
		}},
	"ShipmentService/ListClosedYears": {rows: "closed_years",
		req: func() proto.Message { return &halovetv1.ListClosedYearsRequest{} },
		seed: func(t *testing.T, e pagedEnv, n int) {
			_, err := e.st.CloseYear(context.Background(), 1990+n, "test")
			must(t, err)
		}},
	"AccessService/ListCredentials": {rows: "credentials",
		req:      func() proto.Message { return &halovetv1.ListCredentialsRequest{} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListCredentialsRequest).IncludeRevoked = true },
		// Newest first: every credential added lands before the ones read.
		seed: func(t *testing.T, e pagedEnv, n int) {
			_, _, err := e.st.IssueCredential(context.Background(), store.NewCredential{Name: fmt.Sprintf("pg-%02d", n), Role: access.RoleReader})
			must(t, err)
		}},
	"AccessService/ListAuditEvents": {rows: "events",
		req:      func() proto.Message { return &halovetv1.ListAuditEventsRequest{} },
		refilter: func(m proto.Message) { m.(*halovetv1.ListAuditEventsRequest).ObjectType = "company" },
		seed: func(t *testing.T, e pagedEnv, n int) {
			must(t, e.st.PutCompany(context.Background(), store.Company{CompanyID: fmt.Sprintf("PG-%02d", n), Name: "Invented", CountryCode: "XA"}))
		}},
}

func must(t *testing.T, err error) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
}

// listMethods returns every List RPC of every halovet service, as "Service/Method".
func listMethods(t *testing.T) map[string]protoreflect.MethodDescriptor {
	out := map[string]protoreflect.MethodDescriptor{}
	protoregistry.GlobalFiles.RangeFilesByPackage("halovet.v1", func(f protoreflect.FileDescriptor) bool {
		for i := 0; i < f.Services().Len(); i++ {
			s := f.Services().Get(i)
			for j := 0; j < s.Methods().Len(); j++ {
				if m := s.Methods().Get(j); strings.HasPrefix(string(m.Name()), "List") {
					out[string(s.Name())+"/"+string(m.Name())] = m
				}
			}
		}
		return true
	})
	if len(out) < 13 {
		t.Fatalf("found %d List RPCs in the descriptors; want at least the 13 of v1", len(out))
	}
	return out
}

// Every List RPC of the API takes page_size and page_token and answers next_page_token;
// paged through two rows at a time, with rows added after the first page, it returns every
// row once, in the list's order; a bad page_size, a forged token, another list's token and
// a token with other filters are refused naming the field.
func TestEveryListPages(t *testing.T) {
	methods := listMethods(t)
	for name := range pagedCases {
		if methods[name] == nil {
			t.Errorf("the paging table names %s, which is no List RPC", name)
		}
	}
	for name, m := range methods {
		c, ok := pagedCases[name]
		if !ok {
			t.Errorf("%s has no case in the paging table: give it pages and a case", name)
			continue
		}
		in, out := m.Input(), m.Output()
		if f := in.Fields().ByName("page_size"); f == nil || f.Kind() != protoreflect.Int32Kind {
			t.Errorf("%s: the request has no int32 page_size", name)
			continue
		}
		if f := in.Fields().ByName("page_token"); f == nil || f.Kind() != protoreflect.StringKind {
			t.Errorf("%s: the request has no string page_token", name)
			continue
		}
		if f := out.Fields().ByName("next_page_token"); f == nil || f.Kind() != protoreflect.StringKind {
			t.Errorf("%s: the response has no string next_page_token", name)
			continue
		}
		t.Run(strings.ReplaceAll(name, "/", "."), func(t *testing.T) {
			t.Parallel()
			testListPages(t, m, c)
		})
	}
}

func testListPages(t *testing.T, m protoreflect.MethodDescriptor, c pagedCase) {
	conn, st := startTestServer(t)
	shipRegistry(t, conn)
	env := pagedEnv{conn: conn, st: st}
	ctx := context.Background()
	method := "/" + string(m.Parent().FullName()) + "/" + string(m.Name())
	respType, err := protoregistry.GlobalTypes.FindMessageByName(m.Output().FullName())
	if err != nil {
		t.Fatal(err)
	}
	rowsField := m.Output().Fields().ByName(c.rows)
	if rowsField == nil || !rowsField.IsList() {
		t.Fatalf("%s has no repeated field %s", m.Output().FullName(), c.rows)
	}
	call := func(req proto.Message, size int32, tok string) ([]string, string, error) {
		r := proto.Clone(req)
		rr := r.ProtoReflect()
		rr.Set(rr.Descriptor().Fields().ByName("page_size"), protoreflect.ValueOfInt32(size))
		rr.Set(rr.Descriptor().Fields().ByName("page_token"), protoreflect.ValueOfString(tok))
		resp := respType.New().Interface()
		if err := conn.Invoke(ctx, method, r, resp); err != nil {
			return nil, "", err
		}
		var rows []string
		l := resp.ProtoReflect().Get(rowsField).List()
		for i := 0; i < l.Len(); i++ {
			b, err := proto.MarshalOptions{Deterministic: true}.Marshal(l.Get(i).Message().Interface())
			if err != nil {
				t.Fatal(err)
			}
			rows = append(rows, string(b))
		}
		return rows, resp.ProtoReflect().Get(m.Output().Fields().ByName("next_page_token")).String(), nil
	}
	all := func() []string { // the whole list, in pages of 500 (ListEntries' largest)
		var rows []string
		tok := ""
		for {
			page, next, err := call(c.req(), 500, tok)
			if err != nil {
				t.Fatalf("the whole list: %v", err)
			}
			rows = append(rows, page...)
			if tok = next; tok == "" {
				return rows
			}
		}
	}

	if c.seed != nil {
		for n := 10; n <= 70; n += 10 {
			c.seed(t, env, n)
		}
	}
	before := all()
	if len(before) < 5 {
		t.Fatalf("the list holds %d rows after seeding; want at least 5 to page through", len(before))
	}
	first, tok, err := call(c.req(), 2, "")
	if err != nil || tok == "" || !slices.Equal(first, before[:2]) {
		t.Fatalf("first page: %v, %d rows, next %q; want the list's first 2 rows and a token", err, len(first), tok)
	}
	if c.seed != nil {
		for _, n := range []int{5, 45, 95} { // before, among and after the rows read
			c.seed(t, env, n)
		}
	}
	got := slices.Clone(first)
	for pages := 1; tok != ""; pages++ {
		if pages > len(before) {
			t.Fatalf("more than %d pages of 2 rows", len(before))
		}
		var page []string
		page, tok, err = call(c.req(), 2, tok)
		if err != nil {
			t.Fatalf("page %d: %v", pages+1, err)
		}
		if len(page) == 0 || len(page) > 2 || (tok != "" && len(page) != 2) {
			t.Fatalf("page %d holds %d rows (next %q); want 2, or 1 to 2 on the last", pages+1, len(page), tok)
		}
		got = append(got, page...)
	}
	// Keyset pages: what was read is the first page, then every row the list holds after
	// that page's last row when paging ended (rows added ahead of it included, rows added
	// behind it not), each once and in order.
	after := all()
	p := slices.Index(after, first[1])
	if p < 0 {
		t.Fatalf("the first page's last row is no longer in the list")
	}
	if want := append(slices.Clone(first), after[p+1:]...); !slices.Equal(got, want) {
		t.Errorf("paging returned %d rows; want %d: the first page and the %d rows after it in the list as it ended", len(got), len(want), len(after)-p-1)
		for i, r := range got {
			if slices.Index(got, r) != i {
				t.Errorf("row %d came twice", i)
			}
		}
	}
	if c.seed != nil && len(after)-len(before) != 3 {
		t.Errorf("the list grew by %d rows while paging; the test adds 3", len(after)-len(before))
	}

	refused := func(what string, req proto.Message, size int32, tok, field string) {
		t.Helper()
		_, _, err := call(req, size, tok)
		if status.Code(err) != codes.InvalidArgument || !slices.Contains(catalogueViolatedFields(status.Convert(err)), field) {
			t.Errorf("%s: %v; want InvalidArgument naming %s", what, err, field)
		}
	}
	refused("page_size -1", c.req(), -1, "", "page_size")
	refused("page_size 1001", c.req(), 1001, "", "page_size")
	_, tok, err = call(c.req(), 2, "")
	if err != nil || tok == "" {
		t.Fatalf("first page again: %v", err)
	}
	payload, sig, _ := strings.Cut(tok, ".")
	refused("a made-up token", c.req(), 2, "PG-10", "page_token")
	refused("a token without its signature", c.req(), 2, payload, "page_token")
	refused("a token with another signature", c.req(), 2, payload+"."+strings.Repeat("A", len(sig)), "page_token")
	if c.refilter != nil {
		req := c.req()
		c.refilter(req)
		refused("the token with other filters", req, 2, tok, "page_token")
	}
	// Another list's token: ListParties' (the demo register has 3 Parties), or for
	// ListParties ListEntries'.
	var other string
	if m.Name() == "ListParties" {
		var r halovetv1.ListEntriesResponse
		must(t, conn.Invoke(ctx, "/halovet.v1.CatalogueService/ListEntries", &halovetv1.ListEntriesRequest{PageSize: 1}, &r))
		other = r.GetNextPageToken()
	} else {
		var r halovetv1.ListPartiesResponse
		must(t, conn.Invoke(ctx, "/halovet.v1.LicensingService/ListParties", &halovetv1.ListPartiesRequest{PageSize: 1}, &r))
		other = r.GetNextPageToken()
	}
	if other == "" {
		t.Fatalf("no token of another list to try")
	}
	refused("another list's token", c.req(), 2, other, "page_token")
}

// Over HTTP/JSON the page fields are query parameters: GET /v1/parties?page_size=2 gives
// two of the demo register's three Parties and a token, the token the third, and a bad
// page_size is a 400 naming the field.
func TestListPagesOverHTTP(t *testing.T) {
	t.Parallel()
	_, base, httpClient := startHTTPTestServer(t)
	get := func(query string) (int, map[string]any) {
		t.Helper()
		resp, err := httpClient().Get(base + "/v1/parties?" + query)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		var v map[string]any
		if err := json.NewDecoder(resp.Body).Decode(&v); err != nil {
			t.Fatal(err)
		}
		return resp.StatusCode, v
	}
	code, first := get("page_size=2")
	tok, _ := first["nextPageToken"].(string)
	if code != http.StatusOK || len(first["parties"].([]any)) != 2 || tok == "" {
		t.Fatalf("page_size=2: %d %v; want two Parties and a token", code, first)
	}
	code, second := get("page_size=2&page_token=" + url.QueryEscape(tok))
	if ps, _ := second["parties"].([]any); code != http.StatusOK || len(ps) != 1 || second["nextPageToken"] != nil && second["nextPageToken"] != "" {
		t.Fatalf("second page: %d %v; want the third Party and no token", code, second)
	}
	code, bad := get("page_size=5000")
	if raw, _ := json.Marshal(bad); code != http.StatusBadRequest || !strings.Contains(string(raw), "page_size") {
		t.Errorf("page_size=5000: %d %s; want 400 naming page_size", code, raw)
	}
}
