package validate

import (
	"strings"
)

// Plausibility limits for the net fill of one container (common practice): a "ton
// container" (returnable pressure drum) holds about 1000 kg of refrigerant net, so a fill
// above that suggests the total was entered as the fill; the smallest retail cans hold a few
// hundred grams, so a fill below 0.1 kg suggests grams entered as kilograms or a confused
// container count. Laboratory ampoules are legitimately smaller, so laboratory purpose is
// exempt from the lower limit.
const (
	maxFillKg = 1000.0
	minFillKg = 0.1
	// maxNetKg bounds one record: 100,000 t, a sanity limit above any single consignment
	// (the largest chemical tankers carry a few tens of thousands of tonnes; common practice).
	// It also keeps every figure of an accepted record (up to 1.48e9 t CO2-eq for HFC-23)
	// within the store's exact 64-bit count of billionths.
	maxNetKg = 1e8
)

func (c *checker) quantityRules() {
	r := c.r
	q := strings.TrimSpace(r.Quantity)
	var d Decimal
	qOK := false
	if q == "" {
		c.add(CodeQtyMissing, "", "quantity is empty; write the net mass as a decimal number with a dot, e.g. 1250.5")
	} else if q[0] == '+' {
		c.add(CodeQtyFormat, "", "quantity %q carries a sign; accepted: digits with at most one dot as the decimal separator and no sign, e.g. 1250.5", cutText(q))
	} else if v, err := ParseDecimal(q); err != nil {
		c.add(CodeQtyFormat, "", "quantity: %v", err)
	} else if v.Sign() <= 0 {
		c.add(CodeQtyNotPositive, "", "quantity %s is not above zero; declare the net mass shipped", v.String())
	} else {
		d, qOK = v, true
	}
	u, err := ParseUnit(r.Unit)
	switch {
	case err != nil:
		c.add(CodeQtyUnitUnknown, "", "quantity_unit: %v", err)
	case u == UnitUnspecified:
		c.add(CodeQtyUnitUnknown, "", "quantity_unit is empty; accepted: kg, t (metric tonne), g, lb")
	}
	contOK := true
	if r.ContainerCount < 0 || r.ContainerCount > maxContainers {
		c.add(CodeQtyContainersInvalid, "", "container_count %d is out of range; accepted: 0 (quantity is the total) to %d", r.ContainerCount, int64(maxContainers))
		contOK = false
	}
	if !qOK || u == UnitUnspecified || !contOK {
		return
	}
	kg, err := ToKilograms(d, u, r.ContainerCount)
	if err != nil { // not reached: unit and count were checked above
		c.add(CodeQtyFormat, "", "quantity: %v", err)
		return
	}
	if belowStoreStep(d, u, r.ContainerCount) {
		c.add(CodeQtyTooSmall, "", "the net mass is %s kg, below the smallest amount the register stores (0.000000001 kg); declare at least 0.000000001 kg", trimTiny(kg))
		return
	}
	if kg > maxNetKg {
		c.add(CodeQtyTooLarge, "", "the net mass is %s t, above the limit of 100000 t for one record", trimFloat(kg/1000))
		return
	}
	c.netKg, c.qtyOK = kg, true
	if r.ContainerCount > 0 {
		fill, _ := ToKilograms(d, u, 0)
		c.fillKg = fill
		shown := d.String() + " kg"
		if u != UnitKilogram {
			shown = d.String() + " " + u.String() + " = " + trimFloat(fill) + " kg"
		}
		switch {
		case fill > maxFillKg:
			c.add(CodeQtyFillLarge, "", "each of the %d containers would hold %s net, more than a ton container's usual fill of about 1000 kg; with container_count set, quantity is the fill of one container (give the total with container_count 0)", r.ContainerCount, shown)
		case fill < minFillKg && r.Purpose != PurposeLaboratory:
			c.add(CodeQtyFillSmall, "", "each of the %d containers would hold %s net, less than 0.1 kg; check the unit (g or kg) and that quantity is the fill of one container", r.ContainerCount, shown)
		}
	}
}
