package controls

import (
	"cmp"
	"fmt"
	"math/big"
	"slices"
	"strings"

	"github.com/halovet/halovet/exact"
)

// CompanyReference is one company's reference amounts by year (e.g. its recorded imports in
// the plan's unit), from which its share is taken.
type CompanyReference struct {
	CompanyID string
	Amounts   map[int]exact.Decimal // by calendar year; a year absent counts as 0
}

// QuotaRequest describes a quota plan.
type QuotaRequest struct {
	// Total is the amount the plan starts from: next year's allowed level (see
	// Rulebook.AllowedLevel) or an explicit total, in the plan's unit; ≥ 0.
	Total exact.Decimal
	// Fraction of Total to distribute, 0 < Fraction ≤ 1 (e.g. 0.9 to hold back a reserve).
	Fraction exact.Decimal
	// Granularity is the smallest unit of allocation, > 0 (e.g. 0.001 ODP t).
	Granularity exact.Decimal
	// ReferenceYears are the years whose amounts are added to give each reference amount.
	ReferenceYears []int
	Companies      []CompanyReference
}

// Quota is one company's proposal.
type Quota struct {
	CompanyID      string
	Reference      exact.Decimal // sum of the company's amounts over the reference years, exact
	ReferenceShare exact.Decimal // Reference / sum of all references, to 6 places (exact.Ratio)
	ExactShare     exact.Decimal // Distributable × Reference / sum, before rounding to whole units; to 9 places
	Units          int64         // whole granularity units allocated
	Amount         exact.Decimal // Units × Granularity, exact
}

// QuotaPlan is the result of PlanQuotas.
type QuotaPlan struct {
	Total         exact.Decimal
	Fraction      exact.Decimal
	Distributable exact.Decimal // Total × Fraction, exact
	Granularity   exact.Decimal
	Units         int64         // units distributed: floor(Distributable / Granularity)
	Distributed   exact.Decimal // Units × Granularity, exact; never above Distributable
	Quotas        []Quota       // by company id
}

// PlanQuotas distributes floor(Total × Fraction / Granularity) whole units of Granularity
// among the companies in proportion to their reference amounts, by the largest-remainder
// (Hamilton) method: each company first gets the whole units of its exact share; the units
// left go one each to the largest remainders, ties broken by the larger reference amount,
// then by the smaller company id. The total never exceeds Total × Fraction, and each quota
// is within one unit of its exact share. A company with a zero reference gets nothing.
//
// Inputs are exact decimals (0.001 means exactly 1/1000), and the arithmetic is exact
// (math/big), so rounding never pushes
// the total above the distributable amount and ties are true ties. The error wraps
// ErrNoReference when every reference amount is zero, else ErrInvalidInput.
func PlanQuotas(req QuotaRequest) (QuotaPlan, error) {
	if !nonNeg(req.Total) {
		return QuotaPlan{}, fieldErr("total", "an amount ≥ 0", "is %v", req.Total)
	}
	if req.Fraction.Sign() <= 0 || req.Fraction.Cmp(exact.FromInt(1)) > 0 {
		return QuotaPlan{}, fieldErr("fraction", "a number above 0 and at most 1", "is %v", req.Fraction)
	}
	if req.Granularity.Sign() <= 0 {
		return QuotaPlan{}, fieldErr("granularity", "a finite amount above 0, e.g. 0.001", "is %v", req.Granularity)
	}
	if len(req.ReferenceYears) == 0 {
		return QuotaPlan{}, fieldErr("reference_years", "at least one calendar year", "is empty")
	}
	for i, y := range req.ReferenceYears {
		if err := checkYear(fmt.Sprintf("reference_years[%d]", i), y); err != nil {
			return QuotaPlan{}, err
		}
		if slices.Index(req.ReferenceYears, y) != i {
			return QuotaPlan{}, fieldErr(fmt.Sprintf("reference_years[%d]", i), "each year once", "%d appears twice", y)
		}
	}
	if len(req.Companies) == 0 {
		return QuotaPlan{}, fieldErr("companies", "at least one company with reference amounts", "is empty")
	}

	type entry struct {
		id        string
		ref       *big.Rat
		exact     *big.Rat // share in units
		units     *big.Int
		remainder *big.Rat
	}
	entries := make([]*entry, len(req.Companies))
	ids := map[string]bool{}
	sum := new(big.Rat)
	for i, c := range req.Companies {
		f := fmt.Sprintf("companies[%d]", i)
		id := strings.TrimSpace(c.CompanyID)
		if id == "" {
			return QuotaPlan{}, fieldErr(f+".company_id", "a non-empty company id", "is empty")
		}
		if ids[id] {
			return QuotaPlan{}, fieldErr(f+".company_id", "each company once", "%q appears twice", id)
		}
		ids[id] = true
		ref := new(big.Rat)
		for _, y := range req.ReferenceYears {
			v := c.Amounts[y]
			if !nonNeg(v) {
				return QuotaPlan{}, fieldErr(fmt.Sprintf("%s.amounts[%d]", f, y), "an amount ≥ 0", "is %v", v)
			}
			ref.Add(ref, decimal(v))
		}
		sum.Add(sum, ref)
		entries[i] = &entry{id: id, ref: ref}
	}
	if sum.Sign() == 0 {
		return QuotaPlan{}, fmt.Errorf("%w: every company's reference amount over the years %v is zero, so there is no share to distribute by; nothing was distributed. Choose reference years with recorded amounts, or set the quotas explicitly",
			ErrNoReference, req.ReferenceYears)
	}

	gran := decimal(req.Granularity)
	dist := new(big.Rat).Mul(decimal(req.Total), decimal(req.Fraction))
	distUnits := new(big.Rat).Quo(dist, gran) // exact, possibly fractional
	n := floorRat(distUnits)
	if !n.IsInt64() {
		return QuotaPlan{}, fieldErr("granularity", "a granularity that leaves fewer than 2^63 units",
			"%v splits %v into too many units", req.Granularity, req.Total)
	}

	// Whole units of each exact share; then the units left, by largest remainder.
	given := new(big.Int)
	for _, e := range entries {
		e.exact = new(big.Rat).Mul(distUnits, new(big.Rat).Quo(e.ref, sum))
		e.units = floorRat(e.exact)
		e.remainder = new(big.Rat).Sub(e.exact, new(big.Rat).SetInt(e.units))
		given.Add(given, e.units)
	}
	left := new(big.Int).Sub(n, given).Int64() // 0 ≤ left < number of companies with a remainder
	order := slices.Clone(entries)
	slices.SortFunc(order, func(a, b *entry) int {
		return cmp.Or(b.remainder.Cmp(a.remainder), b.ref.Cmp(a.ref), cmp.Compare(a.id, b.id))
	})
	for _, e := range order {
		if left == 0 {
			break
		}
		if e.ref.Sign() == 0 || e.remainder.Sign() == 0 {
			break // sorted: no later entry has a remainder either
		}
		e.units.Add(e.units, big.NewInt(1))
		left--
	}

	plan := QuotaPlan{Total: ratDecimal(decimal(req.Total)), Fraction: ratDecimal(decimal(req.Fraction)),
		Granularity: ratDecimal(gran), Distributable: ratDecimal(dist)}
	total := new(big.Int)
	for _, e := range entries {
		total.Add(total, e.units)
	}
	plan.Units = total.Int64() // equals floor(Distributable / Granularity); see the doc comment
	plan.Distributed = ratDecimal(new(big.Rat).Mul(new(big.Rat).SetInt(total), gran))
	shareUnit := exact.Ratio.Spec().DerivedPlaces
	for _, e := range entries {
		q := Quota{CompanyID: e.id, Reference: ratDecimal(e.ref), Units: e.units.Int64()}
		q.ReferenceShare = ratRound(new(big.Rat).Quo(e.ref, sum), shareUnit)
		q.ExactShare = ratRound(new(big.Rat).Mul(e.exact, gran), exact.Tonnes.Spec().DerivedPlaces)
		q.Amount = ratDecimal(new(big.Rat).Mul(new(big.Rat).SetInt(e.units), gran))
		plan.Quotas = append(plan.Quotas, q)
	}
	slices.SortFunc(plan.Quotas, func(a, b Quota) int { return cmp.Compare(a.CompanyID, b.CompanyID) })
	return plan, nil
}

// decimal is v as an exact rational.
func decimal(v exact.Decimal) *big.Rat { return v.Rat() }

// ratDecimal writes r, a sum or product of decimals (a finite decimal), as an exact.Decimal.
func ratDecimal(r *big.Rat) exact.Decimal {
	return exact.MustParse(r.FloatString(ratPlaces(r)))
}

// ratPlaces is the number of decimals that write r exactly when its denominator has no
// prime factor but 2 and 5, else 30 (more than any figure keeps).
func ratPlaces(r *big.Rat) int {
	d := new(big.Int).Set(r.Denom())
	two, five, zero := big.NewInt(2), big.NewInt(5), new(big.Int)
	p2, p5 := 0, 0
	m := new(big.Int)
	for m.Mod(d, two).Cmp(zero) == 0 {
		d.Quo(d, two)
		p2++
	}
	for m.Mod(d, five).Cmp(zero) == 0 {
		d.Quo(d, five)
		p5++
	}
	if d.Cmp(big.NewInt(1)) != 0 {
		return 30
	}
	return max(p2, p5)
}

// ratRound writes r rounded half away from zero to places decimals.
func ratRound(r *big.Rat, places int32) exact.Decimal {
	return exact.MustParse(r.FloatString(int(places) + 1)).Round(places)
}

// floorRat is ⌊r⌋ for r ≥ 0.
func floorRat(r *big.Rat) *big.Int {
	return new(big.Int).Quo(r.Num(), r.Denom())
}
