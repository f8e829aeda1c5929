// Package examples holds examples of calling halovet from other languages: examples/curl
// (HTTP/JSON) and examples/node (gRPC with @grpc/grpc-js). Its test runs both against a
// real server and requires the verdicts a Go gRPC client gets.
package examples
