package controls

import (
	"cmp"
	"fmt"
	"slices"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
)

// Counting says whether used, recycled and reclaimed trade counts.
type Counting int

// Counting rules (Decision IV/24 para 2 [V]).
const (
	// ExcludeUsed leaves used, recycled and reclaimed imports and exports out: the rule for
	// every year that is not an Article 5 base year.
	ExcludeUsed Counting = iota
	// IncludeUsed counts them: the exception for an Article 5 Party's base-year consumption.
	IncludeUsed
)

// SubstanceConsumption is one substance's arithmetic in one year.
type SubstanceConsumption struct {
	Substance  Substance
	Flows      FlowSums      // all records for the substance and year, added exactly
	Tonnes     exact.Decimal // calculated consumption, metric t (may be negative)
	ODPTonnes  exact.Decimal // Tonnes × ODP, exact
	CO2eTonnes exact.Decimal // Tonnes × Protocol GWP, exact
}

// GroupConsumption is one Annex group's consumption in one year.
type GroupConsumption struct {
	Year       int
	Group      substances.Group
	Substances []SubstanceConsumption // by designation
	Tonnes     exact.Decimal
	ODPTonnes  exact.Decimal // the figure compared for Annexes A to E
	CO2eTonnes exact.Decimal // the figure compared for Annex F (Groups I and II together)
}

// Consumption is the result of Calculate.
type Consumption struct {
	Counting     Counting
	Groups       []GroupConsumption // by year, then Annex order
	Uncontrolled []string           // designations skipped because not controlled (e.g. R-290 in a blend)
}

// Calculate computes consumption per year, Annex group and substance. Records of the same
// substance and year are added. A substance must carry the same group, ODP and GWP in every
// record. Uncontrolled records are skipped and named in Uncontrolled.
func Calculate(records []Record, counting Counting) (Consumption, error) {
	if counting != ExcludeUsed && counting != IncludeUsed {
		return Consumption{}, fieldErr("counting", "ExcludeUsed or IncludeUsed", "unknown value %d", int(counting))
	}
	type key struct {
		year int
		des  string
	}
	seen := map[string]Substance{}
	merged := map[key]*SubstanceConsumption{}
	uncontrolled := map[string]bool{}
	for i, r := range records {
		if err := r.validate(i); err != nil {
			return Consumption{}, err
		}
		s := r.Substance
		if prev, ok := seen[s.Designation]; ok && !prev.same(s) {
			return Consumption{}, fieldErr(fmt.Sprintf("records[%d].substance", i),
				"the same group, ODP and GWP in every record of one substance",
				"%s has group %q ODP %v GWP %v here but group %q ODP %v GWP %v in an earlier record",
				s.Designation, s.Group, s.ODP, s.GWP, prev.Group, prev.ODP, prev.GWP)
		}
		seen[s.Designation] = s
		if s.Group == substances.GroupNone {
			uncontrolled[s.Designation] = true
			continue
		}
		k := key{r.Year, s.Designation}
		sc := merged[k]
		if sc == nil {
			sc = &SubstanceConsumption{Substance: s}
			merged[k] = sc
		}
		sc.Flows = sc.Flows.AddFlows(r.Flows)
	}

	type gkey struct {
		year  int
		group substances.Group
	}
	groups := map[gkey]*GroupConsumption{}
	for k, sc := range merged {
		sc.Tonnes = sc.Flows.Counted(counting == IncludeUsed)
		sc.ODPTonnes = sc.Tonnes.Mul(sc.Substance.ODP)
		sc.CO2eTonnes = sc.Tonnes.Mul(sc.Substance.GWP)
		gk := gkey{k.year, sc.Substance.Group}
		g := groups[gk]
		if g == nil {
			g = &GroupConsumption{Year: k.year, Group: gk.group}
			groups[gk] = g
		}
		g.Substances = append(g.Substances, *sc)
	}
	out := Consumption{Counting: counting}
	for _, g := range groups {
		slices.SortFunc(g.Substances, func(a, b SubstanceConsumption) int {
			return cmp.Compare(a.Substance.Designation, b.Substance.Designation)
		})
		for _, s := range g.Substances {
			g.Tonnes = g.Tonnes.Add(s.Tonnes)
			g.ODPTonnes = g.ODPTonnes.Add(s.ODPTonnes)
			g.CO2eTonnes = g.CO2eTonnes.Add(s.CO2eTonnes)
		}
		out.Groups = append(out.Groups, *g)
	}
	slices.SortFunc(out.Groups, func(a, b GroupConsumption) int {
		if c := cmp.Compare(a.Year, b.Year); c != 0 {
			return c
		}
		return cmp.Compare(groupIndex(a.Group), groupIndex(b.Group))
	})
	for d := range uncontrolled {
		out.Uncontrolled = append(out.Uncontrolled, d)
	}
	slices.Sort(out.Uncontrolled)
	return out, nil
}

func groupIndex(g substances.Group) int { return slices.Index(substances.AllGroups, g) }

// Group returns one group's consumption in one year; ok is false when no record of the
// group exists for that year.
func (c Consumption) Group(year int, g substances.Group) (GroupConsumption, bool) {
	for _, gc := range c.Groups {
		if gc.Year == year && gc.Group == g {
			return gc, true
		}
	}
	return GroupConsumption{}, false
}

// Amount returns a scope's consumption in one year in the given unit, summing the scope's
// groups. ok is false when no record of any group of the scope exists for that year: a year
// with true zero consumption must be passed as a record with zero flows, so that it is told
// apart from missing data. ok is also false for a unit other than UnitTonnes,
// UnitODPTonnes and UnitCO2eTonnes.
func (c Consumption) Amount(year int, scope Scope, unit Unit) (amount exact.Decimal, ok bool) {
	if unit != UnitTonnes && unit != UnitODPTonnes && unit != UnitCO2eTonnes {
		return exact.Zero, false
	}
	for _, g := range scope.Groups() {
		gc, found := c.Group(year, g)
		if !found {
			continue
		}
		ok = true
		switch unit {
		case UnitTonnes:
			amount = amount.Add(gc.Tonnes)
		case UnitODPTonnes:
			amount = amount.Add(gc.ODPTonnes)
		case UnitCO2eTonnes:
			amount = amount.Add(gc.CO2eTonnes)
		}
	}
	return amount, ok
}

// ledger validates records once and caches their consumption under each counting rule.
type ledger struct {
	records []Record
	cache   map[Counting]Consumption
}

func newLedger(records []Record) (*ledger, error) {
	l := &ledger{records: records, cache: map[Counting]Consumption{}}
	if _, err := l.consumption(ExcludeUsed); err != nil {
		return nil, err
	}
	return l, nil
}

func (l *ledger) consumption(c Counting) (Consumption, error) {
	if got, ok := l.cache[c]; ok {
		return got, nil
	}
	got, err := Calculate(l.records, c)
	if err != nil {
		return Consumption{}, err
	}
	l.cache[c] = got
	return got, nil
}
