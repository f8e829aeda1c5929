package substances

import "testing"

// Baselines for the resolver and mixture benchmarks of bench_test.go: the least work that
// gives the same answer when everything is known in advance. The ratio of a benchmark to
// its baseline is what normalization, ranking and bookkeeping cost (BENCHMARKS.md).

var (
	baselineCandidateSink Candidate
	baselineFloatSink     float64
)

// BenchmarkResolveBaselineMapLookup looks up the designations that the identifiers of
// BenchmarkResolveExact resolve to, already normalized, in a plain Go map: no case, space or
// hyphen folding, no ranking, no resolution record.
func BenchmarkResolveBaselineMapLookup(b *testing.B) {
	c := testCatalogue(b)
	byDesignation := map[string]Candidate{}
	for _, s := range c.Substances() {
		byDesignation[s.Designation] = Candidate{Designation: s.Designation, Kind: KindSubstance, Match: MatchDesignation, Score: 1, MatchedOn: s.Designation, Group: s.Group}
	}
	for _, bl := range c.Blends() {
		byDesignation[bl.Designation] = Candidate{Designation: bl.Designation, Kind: KindBlend, Match: MatchDesignation, Score: 1, MatchedOn: bl.Designation}
	}
	exact := benchIdentifiers[:8] // the identifiers BenchmarkResolveExact resolves
	keys := make([]string, len(exact))
	for i, id := range exact {
		best, ok := c.Resolve(id).Unique()
		if !ok {
			b.Fatalf("%q does not resolve to one entry; the baseline needs its designation", id)
		}
		keys[i] = best.Designation
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		cd, ok := byDesignation[keys[i%len(keys)]]
		if !ok {
			b.Fatal("designation missing from the map")
		}
		baselineCandidateSink = cd
	}
}

// baselineComponent is one blend component flattened for the hand-written sum.
type baselineComponent struct {
	frac              float64 // mass fraction
	odp               float64
	mp, ar4, ar5, ar6 float64 // GWPs by set (0 when the set has none)
	annexF            bool    // counted by the Protocol's CO2-eq arithmetic
}

// BenchmarkEvaluateBaselineWeightedSum computes by hand what BenchmarkEvaluateBlend asks of
// Evaluate for R-404A: the mass-weighted ODP and GWP (MP, AR4, AR5, AR6, all components and
// Annex F only), each component's mass, ODP tonnes and CO2-eq tonnes, and the totals, over
// components flattened into an array beforehand. It skips the name lookup, the evaluation
// record, cautions and HS classification.
func BenchmarkEvaluateBaselineWeightedSum(b *testing.B) {
	c := testCatalogue(b)
	blend, ok := c.Blend("R-404A")
	if !ok {
		b.Fatal("R-404A is not in the catalogue")
	}
	comps := make([]baselineComponent, len(blend.Components))
	for i, bc := range blend.Components {
		s, ok := c.Substance(bc.Designation)
		if !ok {
			b.Fatalf("component %s is not in the catalogue", bc.Designation)
		}
		comps[i] = baselineComponent{frac: bc.MassPct / 100, odp: s.ODP, mp: s.ProtocolGWP(),
			ar4: s.GWP[SetAR4], ar5: s.GWP[SetAR5], ar6: s.GWP[SetAR6], annexF: s.Group == GroupFI || s.Group == GroupFII}
	}
	var massKg, odpT, co2T [8]float64
	if len(comps) > len(massKg) {
		b.Fatal("more components than the baseline's arrays hold")
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		m := float64(i%1000) + 1
		var odp, mpF, ar4All, ar4F, ar5All, ar5F, ar6All, ar6F, odpTotal, co2Total float64
		for j := range comps {
			x := &comps[j]
			odp += x.frac * x.odp
			ar4All += x.frac * x.ar4
			ar5All += x.frac * x.ar5
			ar6All += x.frac * x.ar6
			if x.annexF {
				mpF += x.frac * x.mp
				ar4F += x.frac * x.ar4
				ar5F += x.frac * x.ar5
				ar6F += x.frac * x.ar6
			}
			massKg[j] = m * x.frac
			odpT[j] = massKg[j] / 1000 * x.odp
			co2T[j] = 0
			if x.annexF {
				co2T[j] = massKg[j] / 1000 * x.mp
			}
			odpTotal += odpT[j]
			co2Total += co2T[j]
		}
		baselineFloatSink = odp + mpF + ar4All + ar4F + ar5All + ar5F + ar6All + ar6F + odpTotal + co2Total
	}
}
