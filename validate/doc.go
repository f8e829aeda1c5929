// Package validate checks declared import and export records of controlled halocarbons against
// the catalogue, party settings, licences, quotas and phase-out schedules, and reads and writes
// the batch files those records travel in.
package validate
