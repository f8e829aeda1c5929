package substances

import "testing"

var analysisSink Analysis

// benchReading is an R-404A reading just inside its ASHRAE 34-2019 tolerance, with air, as
// a port analyser reports it (invented figures).
var benchReading = Reading{
	Components:        []MeasuredShare{{"R-125", 45.1, 0}, {"R-143a", 50.6, 0}, {"R-134a", 3.3, 0}},
	NonCondensablePct: 1,
	Uncertainty:       0.5,
}

// BenchmarkAnalyseReading matches one reading against the whole catalogue (every substance
// and blend that shares a component with it), with a declaration, hidden substances, the
// reading's own figures and cautions.
func BenchmarkAnalyseReading(b *testing.B) {
	c := testCatalogue(b)
	opts := AnalysisOptions{Declared: "R-404A", NetMassKg: 10}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		a, err := c.Analyse(benchReading, opts)
		if err != nil {
			b.Fatal(err)
		}
		analysisSink = a
	}
}

// BenchmarkAnalyseMixedReading matches a reading no standard blend fits, which also tries
// setting minor components aside.
func BenchmarkAnalyseMixedReading(b *testing.B) {
	c := testCatalogue(b)
	r := Reading{Components: []MeasuredShare{{"HFC-134a", 48, 0}, {"HCFC-22", 48, 0}, {"R-290", 4, 0}}}
	opts := AnalysisOptions{Declared: "HFC-134a", NetMassKg: 10}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		a, err := c.Analyse(r, opts)
		if err != nil {
			b.Fatal(err)
		}
		analysisSink = a
	}
}

// BenchmarkAnalyseOneBlendBaseline is the baseline: one blend evaluation, the band test of
// the reading against R-404A alone (the per-candidate work of the ranking).
func BenchmarkAnalyseOneBlendBaseline(b *testing.B) {
	c := testCatalogue(b)
	rd, _, err := c.readReading(benchReading)
	if err != nil {
		b.Fatal(err)
	}
	i, ok := c.lookupName("R-404A")
	if !ok {
		b.Fatal("R-404A not in the catalogue")
	}
	t := c.hits[i].t
	cd, tols := c.candidateComps(t)
	b.ReportAllocs()
	b.ResetTimer()
	for n := 0; n < b.N; n++ {
		e2, _, _ := score(rd, cd, tols)
		if e2 != 0 {
			b.Fatal("R-404A does not fit its own reading")
		}
	}
}
