// Package controls turns a Party's yearly quantities of controlled substances into the
// figures it reports under the Montreal Protocol: calculated consumption, baselines, allowed
// levels from versioned control-schedule data, compliance headroom and quota proposals.
package controls

// Overview (not part of the package doc):
//
//   - Calculate sums Records (one substance, one year, flows in metric tonnes) into
//     consumption per year and Annex group: production + imports − exports to Parties −
//     destruction − feedstock − QPS (methyl bromide), in metric t, ODP t and CO2-eq t with
//     the Protocol GWPs. Results are never clamped: negative
//     consumption is reported as negative.
//   - A Rulebook holds the control schedules and baseline definitions as data
//     (data/schedules.csv, data/baselines.csv), each row with its source ID and status
//     (V verified, D derived, P partially verified, U unverified). DefaultRulebook parses the
//     embedded copy; ParseRulebook reads a newer one when amendments change the schedules.
//   - Rulebook.Baseline, Rulebook.Assess and Rulebook.AllowedLevel compute baselines, the
//     allowed level per year, headroom and the servicing tails of the HCFC schedules.
//   - PlanQuotas splits a total among companies by the largest-remainder (Hamilton) method.
//
// Out of scope for now: the per-capita alternatives to the Article 5 Annex A and B baselines
// (Art. 5 para 3: 0.3 and 0.2 kg per capita), production baselines and production limits
// (including the basic domestic needs allowances), HFC-23 by-product emissions (Art. 3 para
// 1(d)), and exempted uses (essential, critical, laboratory and analytical), which are
// licensed and reported under their own decisions.
//
// Figures are decision support: the treaty text, national law and the national authority
// prevail.
