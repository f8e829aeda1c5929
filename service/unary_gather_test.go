package service_test

import (
	"context"
	"fmt"
	"slices"
	"sync"
	"sync/atomic"
	"testing"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
)

// A unary check answers a record recorded on the other replica as recorded the moment the
// recording call has returned, without waiting for any announcement, also while 40 other
// unary checks are in flight on the checking replica (so that its stored-key lookups are
// gathered into shared queries), and a key never recorded as new. The register is the
// invented one of register_replicas_test.go (100 kg of HCFC-22 per record, 0.0055 ODP t by
// Montreal Protocol Annex C: 20 records draw 0.11 of the line's 10 ODP t).
func TestUnaryCheckSeesKeysRecordedOnTheOtherReplicaUnderLoad(t *testing.T) {
	connA, st, _ := startServerWith(t, service.Options{Now: registerNow})
	loadRegister(t, connA)
	connB, _ := startSecondServer(t, st)
	ctx := context.Background()
	shipA := halovetv1.NewShipmentServiceClient(connA)
	shipB := halovetv1.NewShipmentServiceClient(connB)

	// The load: 40 goroutines checking never-recorded keys on A until the test ends.
	loadCtx, stopLoad := context.WithCancel(ctx)
	var wg sync.WaitGroup
	var loadCalls atomic.Int64
	for w := 0; w < 40; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			for i := 0; loadCtx.Err() == nil; i++ {
				resp, err := shipA.CheckShipment(loadCtx, &halovetv1.CheckShipmentRequest{Record: registerRecord(fmt.Sprintf("L-%d-%d", w, i))})
				if loadCtx.Err() != nil {
					return
				}
				if err != nil {
					t.Errorf("load check: %v", err)
					return
				}
				if v := resp.GetVerdict(); v.GetRecorded() || v.GetReplayed() || v.GetOutcome() != halovetv1.Outcome_OUTCOME_ACCEPTED {
					t.Errorf("load check of a never-recorded key: recorded %v replayed %v %s; want accepted, not recorded",
						v.GetRecorded(), v.GetReplayed(), joinCodes(v))
					return
				}
				loadCalls.Add(1)
			}
		}(w)
	}
	defer func() { stopLoad(); wg.Wait() }()

	for i := 0; i < 20; i++ {
		key := fmt.Sprintf("R-%d", i)
		rec, err := shipB.RecordShipmentBatch(ctx, &halovetv1.RecordShipmentBatchRequest{Records: []*halovetv1.ShipmentRecord{registerRecord(key)}})
		if err != nil {
			t.Fatal(err)
		}
		stored := rec.GetVerdicts()[0]
		if !stored.GetRecorded() || stored.GetShipmentId() == 0 {
			t.Fatalf("record %s on B: recorded %v, shipment %d; want stored", key, stored.GetRecorded(), stored.GetShipmentId())
		}
		// At once, no polling: the same record on A is answered by what B recorded.
		resp, err := shipA.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: registerRecord(key)})
		if err != nil {
			t.Fatal(err)
		}
		v := resp.GetVerdict()
		if !v.GetRecorded() || !v.GetReplayed() || v.GetShipmentId() != stored.GetShipmentId() || !slices.Contains(findingCodes(v), "DUP_REPLAY") {
			t.Fatalf("check of %s on A right after B recorded it as shipment %d: recorded %v replayed %v shipment %d %s; want recorded, replayed, the same shipment, DUP_REPLAY",
				key, stored.GetShipmentId(), v.GetRecorded(), v.GetReplayed(), v.GetShipmentId(), joinCodes(v))
		}
		// Other content under the key B recorded: a conflict, on A at once too.
		changed := registerRecord(key)
		changed.TotalNetQuantity = "101"
		resp, err = shipA.CheckShipment(ctx, &halovetv1.CheckShipmentRequest{Record: changed})
		if err != nil {
			t.Fatal(err)
		}
		if v := resp.GetVerdict(); v.GetOutcome() != halovetv1.Outcome_OUTCOME_REJECTED || !slices.Contains(findingCodes(v), "DUP_KEY_CONFLICT") {
			t.Fatalf("check on A of other content under %s, recorded on B: %s %s; want rejected with DUP_KEY_CONFLICT", key, v.GetOutcome(), joinCodes(v))
		}
	}
	stopLoad()
	wg.Wait()
	if loadCalls.Load() == 0 {
		t.Fatal("no load check finished: the test did not check under load")
	}
	t.Logf("%d load checks ran meanwhile", loadCalls.Load())
}
