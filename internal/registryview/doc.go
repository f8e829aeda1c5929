// Package registryview holds the reads of the registry that the command line and the
// console both make over the wire API, so that both ask the same question the same way.
package registryview
