package substances

import "testing"

// benchIdentifiers mixes the identifier styles of shipment records: exact names (the common
// case), a bare number, a CAS number, formulas written either way, an HS code and a typo.
var benchIdentifiers = []string{
	"R-22", "HCFC-22", "hcfc 22", "R-404A", "404a", "R-410A", "HFC-134a", "chlorodifluoromethane",
	"75-45-6", "811-97-2", "CHClF2", "CHF2Cl", "CF3CH2F", "2903.45", "R-123a", "R-4O4A",
}

func BenchmarkResolve(b *testing.B) {
	c := testCatalogue(b)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		c.Resolve(benchIdentifiers[i%len(benchIdentifiers)])
	}
}

// BenchmarkResolveFirstSight measures identifiers that need more than a name lookup, as
// when each is seen for the first time (the cache of such identifiers bypassed).
func BenchmarkResolveFirstSight(b *testing.B) {
	c := testCatalogue(b)
	ids := []string{"CF3CH2F", "2903.45", "R-123a", "R-4O4A", "75-45-7", "C2H2F4"}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		c.resolveSlow(ids[i%len(ids)])
	}
}

func BenchmarkResolveExact(b *testing.B) {
	c := testCatalogue(b)
	ids := benchIdentifiers[:8]
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		c.Resolve(ids[i%len(ids)])
	}
}

func BenchmarkEvaluateBlend(b *testing.B) {
	c := testCatalogue(b)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := c.Evaluate("R-404A", float64(i%1000)+1); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkEvaluateInto(b *testing.B) {
	c := testCatalogue(b)
	var ev Evaluation
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := c.EvaluateInto(&ev, "R-404A", float64(i%1000)+1); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkEvaluateShares(b *testing.B) {
	c := testCatalogue(b)
	shares := []Share{{Identifier: "R-32", MassPct: 23}, {Identifier: "R-125", MassPct: 25}, {Identifier: "R-134a", MassPct: 52}} // R-407C composition (ASHRAE 34)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := c.EvaluateShares(shares, 100); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSeedAndCatalogue(b *testing.B) {
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		subs, blends, err := Seed()
		if err != nil {
			b.Fatal(err)
		}
		if _, err := NewCatalogue(subs, blends); err != nil {
			b.Fatal(err)
		}
	}
}
