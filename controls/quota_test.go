package controls

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/halovet/halovet/exact"
)

func refs(pairs ...any) []CompanyReference {
	var out []CompanyReference
	for i := 0; i < len(pairs); i += 2 {
		out = append(out, CompanyReference{CompanyID: pairs[i].(string), Amounts: map[int]exact.Decimal{2024: exact.OfFloat(pairs[i+1].(float64))}})
	}
	return out
}

// TestPlanQuotas checks the largest-remainder (Hamilton) method on worked examples with
// invented companies and amounts (common practice: Hamilton apportionment).
func TestPlanQuotas(t *testing.T) {
	tests := []struct {
		name      string
		req       QuotaRequest
		wantUnits map[string]int64
		wantTotal float64 // Distributed
	}{
		{
			// 10 units among three equal references: exact 3⅓ each → 3, 3, 3 and one unit
			// left; remainders and references tie, so the smallest id (A) gets it.
			name:      "full tie broken by company id",
			req:       QuotaRequest{Total: num("10"), Fraction: num("1"), Granularity: num("1"), ReferenceYears: []int{2024}, Companies: refs("C", 1.0, "A", 1.0, "B", 1.0)},
			wantUnits: map[string]int64{"A": 4, "B": 3, "C": 3}, wantTotal: 10,
		},
		{
			// 2 units, references 1 and 3: exact 0.5 and 1.5 → 0 and 1, one left; remainders
			// tie at 0.5, the larger reference (Y) gets it: 0 and 2.
			name:      "remainder tie broken by larger reference",
			req:       QuotaRequest{Total: num("2"), Fraction: num("1"), Granularity: num("1"), ReferenceYears: []int{2024}, Companies: refs("X", 1.0, "Y", 3.0)},
			wantUnits: map[string]int64{"X": 0, "Y": 2}, wantTotal: 2,
		},
		{
			// Total 10 × fraction 0.75 = 7.5 → 7 whole units; references 5, 3, 2 (sum 10):
			// exact 3.75, 2.25, 1.5 → 3, 2, 1 = 6; one left to the largest remainder (A 0.75).
			// 7 ≤ 7.5: the reserve and the rounding are never distributed.
			name:      "largest remainder, reserve held back",
			req:       QuotaRequest{Total: num("10"), Fraction: num("0.75"), Granularity: num("1"), ReferenceYears: []int{2024}, Companies: refs("A", 5.0, "B", 3.0, "C", 2.0)},
			wantUnits: map[string]int64{"A": 4, "B": 2, "C": 1}, wantTotal: 7,
		},
		{
			// 100 ODP t in 0.001 units = 100 000 units among three equal references:
			// 33 333.33… each → 33 333 × 3 = 99 999, one left to A. Sums exactly to 100.
			name:      "sums exactly to the distributable total",
			req:       QuotaRequest{Total: num("100"), Fraction: num("1"), Granularity: num("0.001"), ReferenceYears: []int{2024}, Companies: refs("A", 7.0, "B", 7.0, "C", 7.0)},
			wantUnits: map[string]int64{"A": 33334, "B": 33333, "C": 33333}, wantTotal: 100,
		},
		{
			// 12.345 / 0.001 is 12344.999… in binary floating point; read as decimals it is
			// 12 345 units. References 1 and 2: exact 4115 and 8230 units, no remainder.
			name:      "decimal granularity is exact",
			req:       QuotaRequest{Total: num("12.345"), Fraction: num("1"), Granularity: num("0.001"), ReferenceYears: []int{2024}, Companies: refs("A", 1.0, "B", 2.0)},
			wantUnits: map[string]int64{"A": 4115, "B": 8230}, wantTotal: 12.345,
		},
		{
			// 0.3 / 0.1 is 2.999… when both are read as binary floats; as decimals it is 3
			// units. References 1 and 2: exact 1 and 2 units.
			name:      "decimal total below a binary boundary",
			req:       QuotaRequest{Total: num("0.3"), Fraction: num("1"), Granularity: num("0.1"), ReferenceYears: []int{2024}, Companies: refs("A", 1.0, "B", 2.0)},
			wantUnits: map[string]int64{"A": 1, "B": 2}, wantTotal: 0.3,
		},
		{
			// A company with zero reference gets zero: 5 units, references 0 and 4 → 0 and 5.
			name:      "zero reference gets zero",
			req:       QuotaRequest{Total: num("5"), Fraction: num("1"), Granularity: num("1"), ReferenceYears: []int{2024}, Companies: refs("A", 0.0, "B", 4.0)},
			wantUnits: map[string]int64{"A": 0, "B": 5}, wantTotal: 5,
		},
		{
			// Reference amounts over two years: A 10 + 20 = 30, B 50 + 10 = 60; year 2021 is
			// not a reference year. 9 units → exact 3 and 6.
			name: "reference years summed",
			req: QuotaRequest{Total: num("9"), Fraction: num("1"), Granularity: num("1"), ReferenceYears: []int{2022, 2023}, Companies: []CompanyReference{
				{CompanyID: "A", Amounts: map[int]exact.Decimal{2021: num("1000"), 2022: num("10"), 2023: num("20")}},
				{CompanyID: "B", Amounts: map[int]exact.Decimal{2022: num("50"), 2023: num("10")}},
			}},
			wantUnits: map[string]int64{"A": 3, "B": 6}, wantTotal: 9,
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			plan, err := PlanQuotas(tc.req)
			if err != nil {
				t.Fatalf("PlanQuotas: %v", err)
			}
			var sum int64
			for _, q := range plan.Quotas {
				if q.Units != tc.wantUnits[q.CompanyID] {
					t.Errorf("%s: %d units, want %d", q.CompanyID, q.Units, tc.wantUnits[q.CompanyID])
				}
				near(t, q.CompanyID+" amount", q.Amount, float64(q.Units)*tc.req.Granularity.Float64(), 1e-9)
				sum += q.Units
			}
			if sum != plan.Units {
				t.Errorf("quota units sum to %d, plan says %d", sum, plan.Units)
			}
			near(t, "distributed", plan.Distributed, tc.wantTotal, 1e-9)
			if plan.Distributed.Cmp(plan.Distributable) > 0 {
				t.Errorf("distributed %v above distributable %v", plan.Distributed, plan.Distributable)
			}
			if !slices.IsSortedFunc(plan.Quotas, func(a, b Quota) int {
				if a.CompanyID < b.CompanyID {
					return -1
				}
				return 1
			}) {
				t.Errorf("quotas not in company order: %+v", plan.Quotas)
			}
		})
	}
}

func TestPlanQuotasDeterministic(t *testing.T) {
	// The same companies in any input order give the same plan (ties as above).
	a := QuotaRequest{Total: num("10"), Fraction: num("1"), Granularity: num("1"), ReferenceYears: []int{2024}, Companies: refs("C", 1.0, "A", 1.0, "B", 1.0, "D", 1.0)}
	first, err := PlanQuotas(a)
	if err != nil {
		t.Fatal(err)
	}
	for i := range 10 {
		r := rand.New(rand.NewPCG(uint64(i), 7))
		b := a
		b.Companies = slices.Clone(a.Companies)
		r.Shuffle(len(b.Companies), func(i, j int) { b.Companies[i], b.Companies[j] = b.Companies[j], b.Companies[i] })
		got, err := PlanQuotas(b)
		if err != nil {
			t.Fatal(err)
		}
		if fmt.Sprint(got.Quotas) != fmt.Sprint(first.Quotas) {
			t.Fatalf("order %v gives %+v, first gave %+v", b.Companies, got.Quotas, first.Quotas)
		}
	}
	// 10 units among 4 equal: 2.5 each → 2 each, 2 left → A and B (smallest ids).
	want := []int64{3, 3, 2, 2}
	for i, q := range first.Quotas {
		if q.Units != want[i] {
			t.Errorf("%s: %d units, want %d", q.CompanyID, q.Units, want[i])
		}
	}
}

// TestPlanQuotasProperties: over random inputs (seeded), the total never exceeds the
// distributable amount, it falls short by less than one granularity, each quota lies within
// one granularity of its exact share, and zero references get zero.
func TestPlanQuotasProperties(t *testing.T) {
	r := rand.New(rand.NewPCG(20261201, 1))
	grans := []float64{1, 0.5, 0.25, 0.1, 0.01, 0.001, 0.0001}
	for iter := range 2000 {
		n := 1 + r.IntN(25)
		req := QuotaRequest{
			Total:          exact.Scaled(int64(r.IntN(1000001)), -3), // 0 to 1000 with 3 decimals
			Fraction:       exact.OfFloat([]float64{1, 0.9, 0.95, 0.5, 0.333}[r.IntN(5)]),
			Granularity:    exact.OfFloat(grans[r.IntN(len(grans))]),
			ReferenceYears: []int{2022, 2023},
		}
		anyRef := false
		for i := range n {
			c := CompanyReference{CompanyID: string(rune('a'+i%26)) + string(rune('0'+i/26)), Amounts: map[int]exact.Decimal{}}
			if r.IntN(5) > 0 { // some companies have no reference at all
				c.Amounts[2022] = exact.Scaled(int64(r.IntN(1000)), -1)
				c.Amounts[2023] = exact.FromInt(int64(r.IntN(3))) // small, often zero; ties are frequent
				anyRef = anyRef || c.Amounts[2022].Add(c.Amounts[2023]).Sign() > 0
			}
			req.Companies = append(req.Companies, c)
		}
		plan, err := PlanQuotas(req)
		if !anyRef {
			if !errors.Is(err, ErrNoReference) {
				t.Fatalf("iter %d: all-zero references: err = %v, want ErrNoReference", iter, err)
			}
			continue
		}
		if err != nil {
			t.Fatalf("iter %d: %v", iter, err)
		}
		dist := req.Total.Float64() * req.Fraction.Float64()
		g := req.Granularity.Float64()
		eps := 1e-9 * math.Max(1, dist)
		sum, refSum := 0.0, 0.0
		for _, c := range req.Companies {
			refSum += c.Amounts[2022].Float64() + c.Amounts[2023].Float64()
		}
		for _, q := range plan.Quotas {
			sum += q.Amount.Float64()
			exact := dist * q.Reference.Float64() / refSum
			if math.Abs(q.Amount.Float64()-exact) >= g+eps {
				t.Fatalf("iter %d: %s quota %v is not within one granularity %v of its exact share %v", iter, q.CompanyID, q.Amount, g, exact)
			}
			if q.Reference.IsZero() && q.Units != 0 {
				t.Fatalf("iter %d: %s has zero reference but %d units", iter, q.CompanyID, q.Units)
			}
			if q.Units < 0 {
				t.Fatalf("iter %d: negative quota %+v", iter, q)
			}
		}
		if sum > dist+eps {
			t.Fatalf("iter %d: total %v exceeds distributable %v", iter, sum, dist)
		}
		if sum <= dist-g-eps {
			t.Fatalf("iter %d: total %v falls short of distributable %v by a granularity %v or more", iter, sum, dist, g)
		}
	}
}

func TestPlanQuotasRejects(t *testing.T) {
	ok := QuotaRequest{Total: num("10"), Fraction: num("1"), Granularity: num("0.001"), ReferenceYears: []int{2024}, Companies: refs("A", 1.0)}
	tests := []struct {
		name   string
		change func(*QuotaRequest)
		field  string
	}{
		{"negative total", func(r *QuotaRequest) { r.Total = num("-1") }, "total"},
		{"zero fraction", func(r *QuotaRequest) { r.Fraction = num("0") }, "fraction"},
		{"fraction above 1", func(r *QuotaRequest) { r.Fraction = num("1.1") }, "fraction"},
		{"zero granularity", func(r *QuotaRequest) { r.Granularity = num("0") }, "granularity"},
		{"too fine granularity", func(r *QuotaRequest) { r.Total = exact.Scaled(1, 300); r.Granularity = exact.Scaled(1, -300) }, "granularity"},
		{"no reference years", func(r *QuotaRequest) { r.ReferenceYears = nil }, "reference_years"},
		{"duplicate reference year", func(r *QuotaRequest) { r.ReferenceYears = []int{2024, 2024} }, "reference_years[1]"},
		{"no companies", func(r *QuotaRequest) { r.Companies = nil }, "companies"},
		{"empty company id", func(r *QuotaRequest) { r.Companies = refs("", 1.0) }, "companies[0].company_id"},
		{"duplicate company", func(r *QuotaRequest) { r.Companies = refs("A", 1.0, "A", 2.0) }, "companies[1].company_id"},
		{"negative amount", func(r *QuotaRequest) { r.Companies = refs("A", -1.0) }, "companies[0].amounts[2024]"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			req := ok
			tc.change(&req)
			_, err := PlanQuotas(req)
			var fe *FieldError
			if !errors.As(err, &fe) || fe.Field != tc.field {
				t.Fatalf("err = %v; want a FieldError on %s", err, tc.field)
			}
		})
	}
	req := ok
	req.Companies = refs("A", 0.0, "B", 0.0)
	_, err := PlanQuotas(req)
	if !errors.Is(err, ErrNoReference) {
		t.Fatalf("all-zero references: err = %v, want ErrNoReference", err)
	}
}

// TestPlanFromAllowedLevel plans quotas for next year's allowed level: non-A5 HCFC 2026,
// 0.5 % × 197.5 = 0.9875 ODP t (Art. 2F paras 1 and 3-6; history_test.go),
// 90 % distributed = 0.88875 → 888 units of 0.001. Companies (invented) with 2024 imports
// 2 and 1 t: exact 592.5 and 296.25 units → 592 + 296 = 888, no unit left.
func TestPlanFromAllowedLevel(t *testing.T) {
	rb := mustRulebook(t)
	lv, err := rb.AllowedLevel(nonA5History(), partyNonA5, ScopeCI, 2026)
	if err != nil {
		t.Fatal(err)
	}
	plan, err := PlanQuotas(QuotaRequest{Total: lv.Value, Fraction: num("0.9"), Granularity: num("0.001"), ReferenceYears: []int{2024}, Companies: refs("QM-1", 2.0, "QM-2", 1.0)})
	if err != nil {
		t.Fatal(err)
	}
	if plan.Units != 888 || plan.Quotas[0].Units != 592 || plan.Quotas[1].Units != 296 {
		t.Errorf("plan = %+v; want 888 units split 592/296", plan)
	}
}
