package halovetv1

import _ "embed"

// Descriptors is a google.protobuf.FileDescriptorSet of every file of proto/ and the files it
// imports, with source info: the comments of every service, method, message, field and enum.
// protoc-gen-go drops the comments from the descriptors it compiles in; the server's
// reflection service answers from this set instead, so that clients such as grpcurl show
// the documentation. `make generate` writes it (buf build --as-file-descriptor-set); the
// drift check keeps it current.
//
//go:embed descriptors.binpb
var Descriptors []byte
