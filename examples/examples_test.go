package examples_test

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"google.golang.org/grpc"
	"google.golang.org/grpc/credentials/insecure"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/pglocal/pgtest"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
)

func TestMain(m *testing.M) { pgtest.Main(m) }

// exampleRecord is the record both examples send (CHC-26-0002 of the invented demo
// scenario's shipments.csv).
func exampleRecord() *halovetv1.ShipmentRecord {
	return &halovetv1.ShipmentRecord{RecordKey: "CHC-26-0002", Direction: halovetv1.Direction_DIRECTION_IMPORT, CompanyId: "XA-1002",
		LicenceNumber: "XA-IMP-2026-002", PartnerCountry: "XC", DeclarationDate: "2026-01-05", Substance: "HCFC-22",
		TotalNetQuantity: "0.7", QuantityUnit: "t", Purpose: halovetv1.Purpose_PURPOSE_SERVICING}
}

type server struct {
	grpcAddr, httpAddr string
	want               *halovetv1.Verdict // the verdict of the record over gRPC from Go
}

// startServer builds halovet, serves a fresh database with the demo scenario loaded, and
// checks the example record over gRPC for the verdict the examples must match.
func startServer(t *testing.T) server {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "halovet")
	if out, err := exec.Command("go", "build", "-o", bin, "../cmd/halovet").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	url := pgtest.NewDatabase(t, "halovet_examples", func(ctx context.Context, url string) error {
		_, err := store.Migrate(ctx, url)
		return err
	})
	s := server{grpcAddr: freeAddr(t), httpAddr: freeAddr(t)}
	ctx, cancel := context.WithCancel(context.Background())
	srv := exec.CommandContext(ctx, bin, "serve", "--database-url", url, "--listen", s.grpcAddr, "--http-listen", s.httpAddr, "--log-level", "warn",
		"--open-access") // loopback only; the examples show the calls, README "Access" how to send a credential
	srv.Cancel = func() error { return srv.Process.Signal(os.Interrupt) }
	var logs bytes.Buffer
	srv.Stdout, srv.Stderr = &logs, &logs
	if err := srv.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		cancel()
		_ = srv.Wait()
		if t.Failed() {
			t.Logf("server log:\n%s", logs.String())
		}
	})
	deadline := time.Now().Add(60 * time.Second)
	for exec.Command(bin, "probe", "--server", s.grpcAddr, "--timeout", "1s").Run() != nil {
		if time.Now().After(deadline) {
			t.Fatalf("the server did not become ready within 60 s")
		}
		time.Sleep(200 * time.Millisecond)
	}
	if out, err := exec.Command(bin, "load", "../testdata/demo/scenario.json", "--server", s.grpcAddr).CombinedOutput(); err != nil {
		t.Fatalf("halovet load: %v\n%s", err, out)
	}
	conn, err := grpc.NewClient(s.grpcAddr, grpc.WithTransportCredentials(insecure.NewCredentials()))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	resp, err := halovetv1.NewShipmentServiceClient(conn).CheckShipment(context.Background(), &halovetv1.CheckShipmentRequest{Record: exampleRecord()})
	if err != nil {
		t.Fatal(err)
	}
	s.want = resp.GetVerdict()
	// The examples must show a real verdict: the record resolves and draws on its licence.
	if s.want.GetFigures().GetResolvedDesignation() != "HCFC-22" || s.want.GetOutcome() == halovetv1.Outcome_OUTCOME_UNSPECIFIED {
		t.Fatalf("the example record's verdict over gRPC is %v; want a judged HCFC-22 record", s.want)
	}
	return s
}

func freeAddr(t *testing.T) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

// errorDetails is the google.rpc.Status both examples print for the refused call.
type errorDetails struct {
	Code    int    `json:"code"`
	Message string `json:"message"`
	Details []struct {
		Type            string `json:"@type"`
		NodeType        string `json:"type"`
		FieldViolations []struct {
			Field       string `json:"field"`
			Description string `json:"description"`
		} `json:"field_violations"`
		FieldViolationsJSON []struct {
			Field string `json:"field"`
		} `json:"fieldViolations"`
	} `json:"details"`
}

// namesRecord reports whether the details carry a BadRequest naming the field record.
func (e errorDetails) namesRecord() bool {
	for _, d := range e.Details {
		if strings.HasSuffix(d.Type, "google.rpc.BadRequest") || d.NodeType == "google.rpc.BadRequest" {
			for _, v := range d.FieldViolations {
				if v.Field == "record" {
					return true
				}
			}
			for _, v := range d.FieldViolationsJSON {
				if v.Field == "record" {
					return true
				}
			}
		}
	}
	return false
}

// TestExamples runs examples/curl/check.sh and examples/node/check.js against one server:
// each gets the verdict a Go gRPC client gets for the same record, and decodes the refused
// call's details to the field violation on record. The Node example is skipped, saying
// so, when node is not installed.
func TestExamples(t *testing.T) {
	s := startServer(t)

	t.Run("curl", func(t *testing.T) {
		if _, err := exec.LookPath("curl"); err != nil {
			t.Skipf("curl is not installed (%v); the curl example needs it", err)
		}
		cmd := exec.Command("sh", "curl/check.sh")
		cmd.Env = append(os.Environ(), "HALOVET_HTTP=http://"+s.httpAddr)
		out, err := cmd.Output()
		if err != nil {
			t.Fatalf("curl/check.sh: %v\n%s", err, out)
		}
		lines := strings.Split(strings.TrimSpace(string(out)), "\n")
		if len(lines) != 3 {
			t.Fatalf("curl/check.sh printed %d lines; want 3:\n%s", len(lines), out)
		}
		got := &halovetv1.CheckShipmentResponse{}
		if err := protojson.Unmarshal([]byte(lines[0]), got); err != nil {
			t.Fatalf("verdict line %s: %v", lines[0], err)
		}
		if !proto.Equal(got.GetVerdict(), s.want) {
			t.Errorf("curl verdict %v\n gRPC verdict %v", got.GetVerdict(), s.want)
		}
		var e errorDetails
		if err := json.Unmarshal([]byte(lines[1]), &e); err != nil {
			t.Fatalf("error line %s: %v", lines[1], err)
		}
		if lines[2] != "HTTP 400" || e.Code != 3 || !e.namesRecord() {
			t.Errorf("refused call: %s %s; want HTTP 400, code 3 and a BadRequest naming record", lines[2], lines[1])
		}
	})

	t.Run("node", func(t *testing.T) {
		node, err := exec.LookPath("node")
		if err != nil {
			t.Skipf("node is not installed (%v): the Node example is not run", err)
		}
		if _, err := os.Stat("node/node_modules/@grpc/grpc-js"); err != nil {
			npm, err := exec.LookPath("npm")
			if err != nil {
				t.Fatalf("node is installed but npm is not, and examples/node/node_modules is missing: %v", err)
			}
			ci := exec.Command(npm, "ci", "--ignore-scripts", "--no-audit", "--no-fund")
			ci.Dir = "node"
			if out, err := ci.CombinedOutput(); err != nil {
				t.Fatalf("npm ci in examples/node (installs the locked @grpc/grpc-js): %v\n%s", err, out)
			}
		}
		cmd := exec.Command(node, "node/check.js")
		cmd.Env = append(os.Environ(), "HALOVET_SERVER="+s.grpcAddr)
		out, err := cmd.Output()
		if err != nil {
			t.Fatalf("node/check.js: %v\n%s", err, out)
		}
		sc := bufio.NewScanner(bytes.NewReader(out))
		sc.Buffer(nil, 1<<20)
		var lines []string
		for sc.Scan() {
			lines = append(lines, sc.Text())
		}
		if len(lines) != 2 {
			t.Fatalf("node/check.js printed %d lines; want 2:\n%s", len(lines), out)
		}
		var v struct {
			Verdict json.RawMessage `json:"verdict"`
		}
		if err := json.Unmarshal([]byte(lines[0]), &v); err != nil {
			t.Fatal(err)
		}
		got := &halovetv1.Verdict{}
		if err := (protojson.UnmarshalOptions{DiscardUnknown: true}).Unmarshal(v.Verdict, got); err != nil {
			t.Fatalf("verdict %s: %v", v.Verdict, err)
		}
		if !proto.Equal(got, s.want) {
			t.Errorf("node verdict %v\n gRPC verdict %v", got, s.want)
		}
		var e struct {
			Error struct {
				GRPCCode string `json:"grpc_code"`
				errorDetails
			} `json:"error"`
		}
		if err := json.Unmarshal([]byte(lines[1]), &e); err != nil {
			t.Fatalf("error line %s: %v", lines[1], err)
		}
		if e.Error.GRPCCode != "INVALID_ARGUMENT" || e.Error.Code != 3 || !e.Error.namesRecord() {
			t.Errorf("refused call: %s; want INVALID_ARGUMENT with a decoded BadRequest naming record", lines[1])
		}
	})
}
