package ledger

import (
	"context"
	"fmt"
	"sync"
	"testing"
	"time"
)

// gatherRegister is a ShipmentRegister whose StoredRecords answers from a map the test
// changes, counts its queries, and can hold a query until released.
type gatherRegister struct {
	ShipmentRegister // nil: only StoredRecords is called

	mu      sync.Mutex
	stored  map[[2]string][]StoredRef
	queries [][][2]string
	hold    chan struct{} // when set, each query waits on it after it has read the map
	started chan struct{} // signalled when a query has read the map
}

func (g *gatherRegister) StoredRecords(ctx context.Context, keys [][2]string) (map[[2]string][]StoredRef, error) {
	g.mu.Lock()
	g.queries = append(g.queries, keys)
	out := map[[2]string][]StoredRef{}
	for _, k := range keys {
		if vs, ok := g.stored[k]; ok {
			out[k] = vs
		}
	}
	hold, started := g.hold, g.started
	g.mu.Unlock()
	if started != nil {
		started <- struct{}{}
	}
	if hold != nil {
		<-hold
	}
	return out, nil
}

func (g *gatherRegister) put(k [2]string, id int64) {
	g.mu.Lock()
	defer g.mu.Unlock()
	g.stored[k] = append(g.stored[k], StoredRef{ID: id, State: StateLive, Version: 1})
}

// A call never joins a query that started before it: a key stored after a query read the
// register, and before a second call asked, is answered as stored to that call, while the
// first call gets what its query saw.
func TestKeyLookupNeverJoinsARunningQuery(t *testing.T) {
	k1, k2 := [2]string{"XA-1", "K-1"}, [2]string{"XA-1", "K-2"}
	g := &gatherRegister{stored: map[[2]string][]StoredRef{}, hold: make(chan struct{}), started: make(chan struct{}, 8)}
	l := newKeyLookup(g, 1)
	ctx := context.Background()
	first := make(chan map[[2]string][]StoredRef, 1)
	go func() {
		m, err := l.StoredRecords(ctx, [][2]string{k1, k2})
		if err != nil {
			t.Error(err)
		}
		first <- m
	}()
	<-g.started // the first query has read the register: nothing stored yet
	g.put(k2, 7)
	second := make(chan map[[2]string][]StoredRef, 1)
	go func() {
		m, err := l.StoredRecords(ctx, [][2]string{k2})
		if err != nil {
			t.Error(err)
		}
		second <- m
	}()
	// The second call must wait for a query of its own; give it time to (wrongly) join.
	time.Sleep(50 * time.Millisecond)
	close(g.hold)
	if m := <-first; len(m) != 0 {
		t.Errorf("first call: %v; want nothing stored (its query ran before K-2 was stored)", m)
	}
	m := <-second
	if vs := m[k2]; len(vs) != 1 || vs[0].ID != 7 {
		t.Errorf("second call: %v; want K-2 stored as shipment 7 (stored before the call asked)", m)
	}
	if len(g.queries) != 2 {
		t.Errorf("%d queries; want 2 (the second call may not join the first)", len(g.queries))
	}
}

// Under concurrency, calls queued while a query runs share the next one, and each gets
// exactly the stored versions of its own keys.
func TestKeyLookupGathersConcurrentCalls(t *testing.T) {
	g := &gatherRegister{stored: map[[2]string][]StoredRef{}, hold: make(chan struct{}), started: make(chan struct{}, 64)}
	for i := 0; i < 40; i += 2 { // every even key is stored
		g.put([2]string{"XA-1", fmt.Sprintf("K-%d", i)}, int64(100+i))
	}
	l := newKeyLookup(g, 1)
	ctx := context.Background()
	// The first call's query is held, so that the 39 others queue behind it.
	var wg sync.WaitGroup
	got := make([]map[[2]string][]StoredRef, 40)
	ask := func(i int) {
		defer wg.Done()
		m, err := l.StoredRecords(ctx, [][2]string{{"XA-1", fmt.Sprintf("K-%d", i)}})
		if err != nil {
			t.Error(err)
		}
		got[i] = m
	}
	wg.Add(1)
	go ask(0)
	<-g.started
	for i := 1; i < 40; i++ {
		wg.Add(1)
		go ask(i)
	}
	time.Sleep(100 * time.Millisecond) // let them queue
	close(g.hold)
	wg.Wait()
	for i, m := range got {
		k := [2]string{"XA-1", fmt.Sprintf("K-%d", i)}
		vs := m[k]
		switch {
		case len(m) > 1:
			t.Errorf("call %d got %d keys; want only its own", i, len(m))
		case i%2 == 0 && (len(vs) != 1 || vs[0].ID != int64(100+i)):
			t.Errorf("call %d: %v; want shipment %d", i, vs, 100+i)
		case i%2 == 1 && len(vs) != 0:
			t.Errorf("call %d: %v; want not stored", i, vs)
		}
	}
	if len(g.queries) >= 40 {
		t.Errorf("%d queries for 40 calls; want the calls queued behind the first to share", len(g.queries))
	}
	t.Logf("%d calls answered by %d queries", len(got), len(g.queries))
}

// A call that gives up returns its context's error and leaves the query it shares to
// the others.
func TestKeyLookupCallGivesUp(t *testing.T) {
	g := &gatherRegister{stored: map[[2]string][]StoredRef{}, hold: make(chan struct{}), started: make(chan struct{}, 8)}
	k := [2]string{"XA-1", "K-1"}
	g.put(k, 5)
	l := newKeyLookup(g, 1)
	done := make(chan map[[2]string][]StoredRef, 1)
	go func() {
		m, _ := l.StoredRecords(context.Background(), [][2]string{k})
		done <- m
	}()
	<-g.started
	ctx, cancel := context.WithCancel(context.Background())
	errc := make(chan error, 1)
	go func() {
		_, err := l.StoredRecords(ctx, [][2]string{k})
		errc <- err
	}()
	time.Sleep(20 * time.Millisecond)
	cancel()
	if err := <-errc; err != context.Canceled {
		t.Errorf("the call that gave up returned %v; want context.Canceled", err)
	}
	close(g.hold)
	if m := <-done; len(m[k]) != 1 {
		t.Errorf("the other call got %v; want K-1 stored", m)
	}
}
