package service_test

import (
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"io"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"

	"github.com/getkin/kin-openapi/openapi2"
	"github.com/getkin/kin-openapi/openapi2conv"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protoreflect"
	"google.golang.org/protobuf/reflect/protoregistry"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// startHTTPTestServer runs the test server and its HTTP handler; it returns the gRPC
// client of the shipment service, the HTTP base URL and the HTTP client to use.
func startHTTPTestServer(t *testing.T) (halovetv1.ShipmentServiceClient, string, func() *http.Client) {
	t.Helper()
	srv, conn, _, _ := runTestServer(t, pgtest.NewDatabase(t, "halovet_service", migrateServiceDB), service.Options{})
	h, err := srv.HTTPHandler()
	if err != nil {
		t.Fatal(err)
	}
	web := httptest.NewServer(h)
	t.Cleanup(web.Close)
	shipRegistry(t, conn)
	return halovetv1.NewShipmentServiceClient(conn), web.URL, web.Client
}

// TestSameVerdictOverGRPCHTTPAndGRPCWeb checks one accepted and one rejected record over
// gRPC, over HTTP/JSON (POST /v1/shipments:check) and over gRPC-Web, and requires the same
// verdict from each.
func TestSameVerdictOverGRPCHTTPAndGRPCWeb(t *testing.T) {
	t.Parallel()
	grpcClient, base, httpClient := startHTTPTestServer(t)
	rejected := shipRecord("WEB-2")
	rejected.PartnerCountry = "" // PARTNER_MISSING (common practice: a declaration names its partner)
	var singles []*halovetv1.Verdict
	for _, rec := range []*halovetv1.ShipmentRecord{shipRecord("WEB-1"), rejected} {
		req := &halovetv1.CheckShipmentRequest{Record: rec}
		viaGRPC, err := grpcClient.CheckShipment(context.Background(), req)
		if err != nil {
			t.Fatal(err)
		}

		body, err := protojson.Marshal(req)
		if err != nil {
			t.Fatal(err)
		}
		resp, err := httpClient().Post(base+"/v1/shipments:check", "application/json", bytes.NewReader(body))
		if err != nil {
			t.Fatal(err)
		}
		raw, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != http.StatusOK {
			t.Fatalf("HTTP/JSON: status %d: %s", resp.StatusCode, raw)
		}
		viaHTTP := &halovetv1.CheckShipmentResponse{}
		if err := protojson.Unmarshal(raw, viaHTTP); err != nil {
			t.Fatalf("HTTP/JSON answer %s: %v", raw, err)
		}

		viaWeb := grpcWebCall(t, httpClient(), base+"/halovet.v1.ShipmentService/CheckShipment", req)

		if !proto.Equal(viaGRPC, viaHTTP) || !proto.Equal(viaGRPC, viaWeb) {
			t.Errorf("record %s: verdicts differ\n gRPC:     %v\n HTTP/JSON: %v\n gRPC-Web: %v", rec.GetRecordKey(), viaGRPC, viaHTTP, viaWeb)
		}
		singles = append(singles, viaGRPC.GetVerdict())
	}

	// The same two records in one batch call (POST /v1/shipments:checkBatch): the same
	// answer over each transport, and each verdict the one its record got alone (100 kg of
	// HCFC-22 is 0.0055 ODP t of a 1 ODP t line, so the first draws nothing the second feels).
	batch := &halovetv1.CheckShipmentBatchRequest{Records: []*halovetv1.ShipmentRecord{shipRecord("WEB-1"), rejected}}
	viaGRPC, err := grpcClient.CheckShipmentBatch(context.Background(), batch)
	if err != nil {
		t.Fatal(err)
	}
	body, err := protojson.Marshal(batch)
	if err != nil {
		t.Fatal(err)
	}
	resp, err := httpClient().Post(base+"/v1/shipments:checkBatch", "application/json", bytes.NewReader(body))
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("HTTP/JSON batch: status %d: %s", resp.StatusCode, raw)
	}
	viaHTTP := &halovetv1.CheckShipmentBatchResponse{}
	if err := protojson.Unmarshal(raw, viaHTTP); err != nil {
		t.Fatalf("HTTP/JSON batch answer %s: %v", raw, err)
	}
	viaWeb := &halovetv1.CheckShipmentBatchResponse{}
	grpcWebInto(t, httpClient(), base+"/halovet.v1.ShipmentService/CheckShipmentBatch", batch, viaWeb)
	if !proto.Equal(viaGRPC, viaHTTP) || !proto.Equal(viaGRPC, viaWeb) {
		t.Errorf("batch answers differ\n gRPC:     %v\n HTTP/JSON: %v\n gRPC-Web: %v", viaGRPC, viaHTTP, viaWeb)
	}
	for i, v := range viaGRPC.GetVerdicts() {
		if i >= len(singles) || !proto.Equal(v, singles[i]) {
			t.Errorf("batch verdict %d %v; the record alone got %v", i+1, v, singles)
		}
	}
	if len(viaGRPC.GetVerdicts()) != 2 {
		t.Errorf("batch of 2 answered %d verdicts", len(viaGRPC.GetVerdicts()))
	}
}

// grpcWebCall makes a unary gRPC-Web call (binary framing) and decodes its answer.
func grpcWebCall(t *testing.T, c *http.Client, url string, req proto.Message) *halovetv1.CheckShipmentResponse {
	t.Helper()
	out := &halovetv1.CheckShipmentResponse{}
	grpcWebInto(t, c, url, req, out)
	return out
}

// grpcWebInto makes a unary gRPC-Web call (binary framing) and decodes its answer into out.
func grpcWebInto(t *testing.T, c *http.Client, url string, req, out proto.Message) {
	t.Helper()
	msg, err := proto.Marshal(req)
	if err != nil {
		t.Fatal(err)
	}
	frame := make([]byte, 5, 5+len(msg))
	binary.BigEndian.PutUint32(frame[1:], uint32(len(msg)))
	hr, err := http.NewRequest(http.MethodPost, url, bytes.NewReader(append(frame, msg...)))
	if err != nil {
		t.Fatal(err)
	}
	hr.Header.Set("Content-Type", "application/grpc-web+proto")
	hr.Header.Set("X-Grpc-Web", "1")
	resp, err := c.Do(hr)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	raw, _ := io.ReadAll(resp.Body)
	var trailers string
	for len(raw) >= 5 {
		flag, n := raw[0], binary.BigEndian.Uint32(raw[1:5])
		payload := raw[5 : 5+n]
		raw = raw[5+n:]
		if flag&0x80 != 0 {
			trailers = string(payload)
			continue
		}
		if err := proto.Unmarshal(payload, out); err != nil {
			t.Fatal(err)
		}
	}
	if !strings.Contains(strings.ReplaceAll(strings.ToLower(trailers), " ", ""), "grpc-status:0") {
		t.Fatalf("gRPC-Web: trailers %q; want grpc-status 0", trailers)
	}
}

// TestHTTPErrorsCarryStatusAndDetails: a bad request over HTTP/JSON answers the HTTP status
// of its gRPC code (INVALID_ARGUMENT: 400) with the google.rpc.Status body the gRPC call gets,
// details included; an unknown path answers 404 naming the OpenAPI document.
func TestHTTPErrorsCarryStatusAndDetails(t *testing.T) {
	t.Parallel()
	_, base, httpClient := startHTTPTestServer(t)
	resp, err := httpClient().Post(base+"/v1/shipments:check", "application/json", strings.NewReader(`{}`))
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusBadRequest {
		t.Fatalf("empty check: status %d (%s); want 400", resp.StatusCode, raw)
	}
	var st struct {
		Code    int               `json:"code"`
		Message string            `json:"message"`
		Details []json.RawMessage `json:"details"`
	}
	if err := json.Unmarshal(raw, &st); err != nil {
		t.Fatalf("error body %s: %v", raw, err)
	}
	if st.Code != 3 || st.Message == "" || len(st.Details) == 0 || !strings.Contains(string(raw), "record") {
		t.Errorf("error body %s; want code 3 (INVALID_ARGUMENT), a message and details naming the field", raw)
	}

	resp, err = httpClient().Get(base + "/v1/no-such-thing")
	if err != nil {
		t.Fatal(err)
	}
	raw, _ = io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusNotFound || !strings.Contains(string(raw), "openapi.json") {
		t.Errorf("unknown path: %d %s; want 404 naming /openapi.json", resp.StatusCode, raw)
	}
}

// TestOpenAPIDocumentIsValidAndComplete loads the served document with kin-openapi,
// converts it to OpenAPI 3 and validates it, and requires a path for every unary RPC of
// proto/ that has an HTTP annotation (every unary RPC has one).
func TestOpenAPIDocumentIsValidAndComplete(t *testing.T) {
	t.Parallel()
	_, base, httpClient := startHTTPTestServer(t)
	resp, err := httpClient().Get(base + "/openapi.json")
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	var doc2 openapi2.T
	if err := json.Unmarshal(raw, &doc2); err != nil {
		t.Fatalf("openapi.json: %v", err)
	}
	doc3, err := openapi2conv.ToV3(&doc2)
	if err != nil {
		t.Fatalf("converting to OpenAPI 3: %v", err)
	}
	if err := doc3.Validate(context.Background()); err != nil {
		t.Fatalf("OpenAPI document invalid: %v", err)
	}
	ops := map[string]bool{}
	for _, item := range doc3.Paths.Map() {
		for _, op := range item.Operations() {
			ops[op.OperationID] = true
		}
	}
	for _, sd := range []string{"CatalogueService", "ShipmentService", "LicensingService", "ConsumptionService", "AnalysisService"} {
		for name := range methodsOf(t, "halovet.v1."+sd) {
			if !ops[sd+"_"+name] {
				t.Errorf("OpenAPI document has no operation %s_%s", sd, name)
			}
		}
	}
}

// methodsOf names the unary methods of a service of the compiled-in registry.
func methodsOf(t *testing.T, service string) map[string]bool {
	t.Helper()
	d, err := protoregistry.GlobalFiles.FindDescriptorByName(protoreflect.FullName(service))
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]bool{}
	ms := d.(protoreflect.ServiceDescriptor).Methods()
	for i := 0; i < ms.Len(); i++ {
		if !ms.Get(i).IsStreamingClient() && !ms.Get(i).IsStreamingServer() {
			out[string(ms.Get(i).Name())] = true
		}
	}
	if len(out) == 0 {
		t.Fatalf("%s has no unary methods", service)
	}
	return out
}

// TestCatalogueOverHTTPHasNoDoubledWrapper reads an entry and evaluates a composition over
// HTTP/JSON as README's curl lines do: the entry is at .substance (not .entry.entry), the
// composition is a list of shares, and the enums read as their wire names.
func TestCatalogueOverHTTPHasNoDoubledWrapper(t *testing.T) {
	t.Parallel()
	_, base, httpClient := startHTTPTestServer(t)
	get := func(resp *http.Response, err error) map[string]any {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
		raw, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != http.StatusOK {
			t.Fatalf("status %d: %s", resp.StatusCode, raw)
		}
		var m map[string]any
		if err := json.Unmarshal(raw, &m); err != nil {
			t.Fatalf("%s: %v", raw, err)
		}
		return m
	}
	entry := get(httpClient().Get(base + "/v1/catalogue/entries/HCFC-22"))
	sub, _ := entry["substance"].(map[string]any)
	// source: Montreal Protocol Annex C Group I (HCFC-22, ODP 0.055).
	if sub["designation"] != "HCFC-22" || sub["odp"] != "0.055" || entry["entry"] != nil {
		t.Errorf("GET entry HCFC-22: %v; want {substance: {designation: HCFC-22, odp: 0.055}} and no entry wrapper", entry)
	}
	editions := map[any]bool{}
	for _, h := range sub["hsCodes"].([]any) {
		editions[h.(map[string]any)["edition"]] = true
	}
	if !editions["HS_EDITION_HS_2022"] || !editions["HS_EDITION_HS_2017"] {
		t.Errorf("HCFC-22 HS editions %v; want HS_EDITION_HS_2017 and HS_EDITION_HS_2022", editions)
	}
	ev := get(httpClient().Post(base+"/v1/catalogue:evaluate", "application/json", strings.NewReader(
		`{"composition":[{"identifier":"R-32","massPercent":"50"},{"identifier":"R-125","massPercent":"50"}],"netMassKg":"10"}`)))
	found := false
	for _, g := range ev["gwps"].([]any) {
		g := g.(map[string]any)
		// source: Kigali Amendment Annex F values (= IPCC AR4): HFC-32 675, HFC-125 3500;
		// 0.5 × 675 + 0.5 × 3500 = 2087.5.
		if g["gwpSet"] == "GWP_SET_PROTOCOL_ANNEXES" && g["convention"] == "GWP_CONVENTION_ANNEX_F_ONLY" {
			found = g["gwp100yr"] == "2087.5"
		}
	}
	if !found {
		t.Errorf("evaluate R-32/R-125 50/50: gwps %v; want protocol-annexes annex-f-only 2087.5", ev["gwps"])
	}
}
