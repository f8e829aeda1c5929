package main

import (
	"context"
	"math"
	"testing"

	"github.com/halovet/halovet/pglocal/pgtest"
	"github.com/halovet/halovet/store"
)

func TestMain(m *testing.M) { pgtest.Main(m) }

func migrate(ctx context.Context, url string) error {
	_, err := store.Migrate(ctx, url)
	return err
}

// TestGenerateSmallRegister builds a small register (the make test scale; the 1,000,000
// build runs only under make bench-register) and checks the report query's totals against
// the generator's formulas recomputed here: per year, the shipment count and the tonnes
// of every component, and the two-component rows of the blend.
func TestGenerateSmallRegister(t *testing.T) {
	ctx := context.Background()
	url := pgtest.NewDatabase(t, "halovet_registerbench", migrate)
	st, err := store.Open(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	const n, first, years = 3000, 2021, 5
	if err := Generate(ctx, st.Pool(), n, first, years); err != nil {
		t.Fatal(err)
	}
	// The generator's formulas (generate.go), recomputed: year first + i % years, mass
	// 10 + ((i * 2654435761) % 9989990) / 1000 kg, kind (i*7) % 6 with kind 5 the
	// two-component blend (R-410A, 50/50 by mass: ASHRAE 34).
	wantTonnes := map[int]float64{}
	wantRows := map[int]int64{}
	for i := int64(1); i <= n; i++ {
		y := first + int(i%years)
		kg := 10 + float64((i*2654435761)%9989990)/1000
		wantTonnes[y] += kg / 1000
		wantRows[y]++
		if (i*7)%6 == 5 {
			wantRows[y]++ // two component rows
		}
	}
	tots, err := st.ShipmentTotals(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	gotTonnes := map[int]float64{}
	gotRows := map[int]int64{}
	for _, x := range tots {
		gotTonnes[x.Year] += x.Tonnes.Float64()
		gotRows[x.Year] += x.Shipments
	}
	for y := first; y < first+years; y++ {
		if math.Abs(gotTonnes[y]-wantTonnes[y]) > 1e-6 {
			t.Errorf("%d: %.9f t, want %.9f", y, gotTonnes[y], wantTonnes[y])
		}
		if gotRows[y] != wantRows[y] {
			t.Errorf("%d: %d component rows, want %d", y, gotRows[y], wantRows[y])
		}
	}
	// The yearly totals the triggers kept equal the sums over the register itself.
	rep, err := st.CheckInvariants(ctx)
	if err != nil || len(rep.Breaches) > 0 {
		t.Errorf("CheckInvariants = %+v, %v; want no breach", rep.Breaches, err)
	}
	ys, err := st.ShipmentYears(ctx)
	if err != nil || len(ys) != years || ys[0] != first {
		t.Errorf("ShipmentYears = %v, %v; want %d years from %d", ys, err, years, first)
	}
	// A second run with the same keys is refused whole, not doubled.
	if err := Generate(ctx, st.Pool(), n, first, years); err == nil {
		t.Error("a second Generate with the same keys succeeded; want the unique key to refuse it")
	}
	again, err := st.ShipmentTotals(ctx, nil)
	if err != nil || len(again) != len(tots) {
		t.Fatalf("after the refused run: %d totals (%v), want %d", len(again), err, len(tots))
	}
	for i := range again {
		a, b := again[i], tots[i]
		same := a.Tonnes.Equal(b.Tonnes)
		a.Tonnes = b.Tonnes
		if a != b || !same {
			t.Errorf("after the refused run, total %d = %+v, want %+v", i, again[i], tots[i])
		}
	}
}
