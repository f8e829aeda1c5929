// Package chart draws the compliance chart of one Annex group over years: consumption
// against the allowed level and the baseline, for the console's year page and the CLI's
// `compliance --chart`. It lays the chart out once as a list of shapes (a scene) and writes
// that scene either as a self-contained SVG (no script, no external reference) or as a
// PNG rasterised in pure Go (golang.org/x/image/vector, the Go fonts), so that both say the
// same thing.
//
// What the chart shows, so that a ministry report can use it as it is:
//   - the Party's name and the group's full name in the title, and the schedule;
//   - consumption as points joined by a line; a year without data is left out of the line
//     and drawn as a shaded column labelled "no data" (never as a point on zero);
//   - an exceeded year as a square marker labelled with the excess;
//   - the allowed level as a step line, and the baseline as a dashed line;
//   - the current, incomplete year marked provisional (a hollow point, a dashed line into
//     it, and "provisional" under its year);
//   - figures with thousands separators.
package chart
