package validate

import (
	"math/big"
	"strings"

	"github.com/halovet/halovet/terms"
)

// Plausibility limits for the net mass of one package (common practice): a "ton container"
// (returnable pressure drum) holds about 1000 kg of refrigerant net and larger quantities
// travel in ISO tank containers declared as one package each, so more than 1000 kg per
// package suggests the total was entered as the fill or the package count is short; the
// smallest retail cans hold a few hundred grams, so less than 0.1 kg per package suggests
// grams entered as kilograms or a confused package count. Laboratory ampoules are
// legitimately smaller, so laboratory purpose is exempt from the lower limit. An ISO tank
// of 20 t declared as one package draws the notice too: it is for review, not refusal.
const (
	maxFillKg = 1000.0
	minFillKg = 0.1
	// maxNetKg bounds one record: 100,000 t, a sanity limit above any single consignment
	// (the largest chemical tankers carry a few tens of thousands of tonnes; common practice).
	// It also keeps every figure of an accepted record (up to 1.48e9 t CO2-eq for HFC-23)
	// within the store's exact 64-bit count of billionths.
	maxNetKg = 1e8
)

// Names of the quantity fields, as in the CSV header and the wire message.
const (
	fieldTotal    = "total_net_quantity"
	fieldUnit     = "quantity_unit"
	fieldPackages = "package_count"
	fieldFill     = "net_fill_per_package"
)

// parseQty reads one of the decimal quantity fields; ok is false (and a finding added) when
// the text is not a decimal above zero. Empty text gives ok false and no finding.
// The result of ParseDecimal, when it is called, is kept in memo for the content hash.
func (c *checker) parseQty(field, text string, memo *parsedDecimal) (Decimal, bool) {
	q := strings.TrimSpace(text)
	if q == "" {
		return Decimal{}, false
	}
	if q[0] == '+' {
		c.add(CodeQtyFormat, field, "%s %q carries a sign; accepted: digits with at most one dot as the decimal separator and no sign, e.g. 1250.5", field, cutText(q))
		return Decimal{}, false
	}
	v, err := ParseDecimal(q)
	memo.d, memo.state = v, parsedOK
	if err != nil {
		memo.state = parseFailed
	}
	switch {
	case err != nil:
		c.add(CodeQtyFormat, field, "%s: %v", field, err)
		return Decimal{}, false
	case v.Sign() <= 0:
		c.add(CodeQtyNotPositive, field, "%s %s is not above zero; declare the net mass shipped", field, v.String())
		return Decimal{}, false
	}
	return v, true
}

// quantityRules reads the net mass. A declaration states the total net mass and,
// separately, the number of packages; halovet takes the total when it is given, else the
// net fill per package times the package count. When both the total and the fill are given
// they must agree within the last digit written of each: each figure stands for the
// interval of half a unit of its last decimal either side (113 for 112.5 to 113.5, a fill
// of 11.3 for 11.25 to 11.35, so 10 packages for 112.5 to 113.5), and the intervals must
// meet. A package count alone only feeds the plausibility of the mass per package.
func (c *checker) quantityRules() {
	r := c.r
	totalText, fillText := strings.TrimSpace(r.TotalQuantity), strings.TrimSpace(r.FillPerPackage)
	total, totalOK := c.parseQty(fieldTotal, totalText, &c.parsed.total)
	fill, fillOK := c.parseQty(fieldFill, fillText, &c.parsed.fill)
	if totalText == "" && fillText == "" {
		c.add(CodeQtyMissing, fieldTotal, "%s is empty; write the total net mass as a decimal number with a dot, e.g. 1250.5 (or give %s with %s)", fieldTotal, fieldFill, fieldPackages)
	}
	u, err := ParseUnit(r.Unit)
	c.parsed.unit, c.parsed.unitState = u, parsedOK
	if err != nil {
		c.parsed.unitState = parseFailed
	}
	switch {
	case err != nil:
		c.add(CodeQtyUnitUnknown, fieldUnit, "%s: %v", fieldUnit, err)
	case u == UnitUnspecified:
		c.add(CodeQtyUnitUnknown, fieldUnit, "%s is empty; accepted: kg, t (metric tonne), g, lb", fieldUnit)
	}
	n := r.PackageCount
	packagesOK := true
	if n < 0 || n > maxContainers {
		c.add(CodeQtyPackagesInvalid, fieldPackages, "%s %d is out of range; accepted: 0 (not declared) to %d", fieldPackages, n, int64(maxContainers))
		packagesOK = false
	}
	if fillText != "" && n == 0 {
		c.add(CodeQtyFillNoPackages, fieldFill, "%s %s is given without %s; give the number of packages, or only %s", fieldFill, fillText, fieldPackages, fieldTotal)
		fillOK = false
	}
	if u == UnitUnspecified || !packagesOK {
		return
	}
	var kg float64
	used, usedN := total, int64(0) // the figure the mass comes from, and its multiplier
	switch {
	case totalOK && fillOK:
		if !fillAgrees(total, fill, n) {
			fillTotal, _ := ToKilograms(fill, u, n)
			totalKg, _ := ToKilograms(total, u, 0)
			c.add(CodeQtyTotalFillDisagree, fieldTotal, "%s %s %s and %s %s %s × %s %d = %s kg disagree (the total is %s kg) by more than the last digit written of each; correct one of them, or give only %s",
				fieldTotal, total.String(), u, fieldFill, fill.String(), u, fieldPackages, n, trimFloat(fillTotal), trimFloat(totalKg), fieldTotal)
			return
		}
		kg, err = ToKilograms(total, u, 0)
	case totalOK && totalText != "" && (fillText == "" || fillOK):
		kg, err = ToKilograms(total, u, 0)
	case fillOK && totalText == "":
		kg, err = ToKilograms(fill, u, n)
		used, usedN = fill, n
	default:
		return // a finding was added
	}
	if err != nil { // not reached: unit and count were checked above
		c.add(CodeQtyFormat, fieldTotal, "%s: %v", fieldTotal, err)
		return
	}
	if belowStoreStep(used, u, usedN) {
		c.add(CodeQtyTooSmall, fieldTotal, "the net mass is %s kg, below the smallest amount the register stores (0.000000001 kg); declare at least 0.000000001 kg", trimTiny(kg))
		return
	}
	if kg > maxNetKg {
		c.add(CodeQtyTooLarge, fieldTotal, "the net mass is %s t, above the limit of 100000 t for one record", trimFloat(kg/1000))
		return
	}
	c.netKg, c.qtyOK = kg, true
	c.mass = Quantity{Value: used, Unit: u, Packages: usedN}
	if n > 0 {
		per := kg / float64(n)
		switch {
		case per > maxFillKg:
			c.add(CodeQtyFillLarge, fieldPackages, "%s kg net in %d packages is %s kg per package, more than a ton container's usual fill of about 1000 kg; check that %s is the total and %s the number of packages",
				trimFloat(kg), n, trimFloat(per), fieldTotal, fieldPackages)
		case per < minFillKg && r.Purpose != terms.PurposeLaboratory:
			c.add(CodeQtyFillSmall, fieldPackages, "%s kg net in %d packages is %s kg per package, less than 0.1 kg; check the unit (g or kg) and the number of packages",
				trimFloat(kg), n, trimFloat(per))
		}
	}
}

// fillAgrees reports whether a total T and a fill F × n packages, both positive and in the
// same unit, agree within the last digit written: |F·n − T| ≤ ½·10^eT + ½·n·10^eF, where eT
// and eF are the exponents of the last digits written. Exact integer arithmetic.
func fillAgrees(total, fill Decimal, n int64) bool {
	e := min(total.Exp, fill.Exp)
	scale := func(coef uint64, exp int) *big.Int {
		v := new(big.Int).SetUint64(coef)
		return v.Mul(v, new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(exp-e)), nil))
	}
	bn := big.NewInt(n)
	t := scale(total.Coef, total.Exp)
	f := scale(fill.Coef, fill.Exp)
	f.Mul(f, bn)
	diff := new(big.Int).Sub(f, t)
	diff.Abs(diff).Lsh(diff, 1) // 2·|F·n − T|
	tol := scale(1, total.Exp)
	tol.Add(tol, new(big.Int).Mul(bn, scale(1, fill.Exp))) // 10^eT + n·10^eF
	return diff.Cmp(tol) <= 0
}
