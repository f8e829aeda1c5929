// Package openapi holds the OpenAPI (Swagger 2.0) document of halovet's HTTP/JSON paths,
// generated from the google.api.http annotations of proto/ by protoc-gen-openapiv2
// (`make generate`; the drift check keeps it current).
package openapi

import _ "embed"

// Document is halovet.swagger.json.
//
//go:embed halovet.swagger.json
var Document []byte
