// Package service is halovet's gRPC transport: it maps the v1 API to the domain packages
// and the store, reports health, and wires interceptors, reflection and graceful shutdown.
package service
