package service

import (
	"fmt"

	"google.golang.org/grpc"
	"google.golang.org/grpc/reflection"
	reflectionv1 "google.golang.org/grpc/reflection/grpc_reflection_v1"
	reflectionv1alpha "google.golang.org/grpc/reflection/grpc_reflection_v1alpha"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protodesc"
	"google.golang.org/protobuf/reflect/protoreflect"
	"google.golang.org/protobuf/reflect/protoregistry"
	"google.golang.org/protobuf/types/descriptorpb"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// documentedFiles are halovet's .proto files (and their imports) with their comments, from
// the descriptor set embedded in the generated package.
func documentedFiles() (*protoregistry.Files, error) {
	var set descriptorpb.FileDescriptorSet
	if err := proto.Unmarshal(halovetv1.Descriptors, &set); err != nil {
		return nil, fmt.Errorf("embedded descriptor set: %w", err)
	}
	files, err := protodesc.NewFiles(&set)
	if err != nil {
		return nil, fmt.Errorf("embedded descriptor set: %w", err)
	}
	return files, nil
}

// layeredResolver answers from the documented files first and from the compiled-in
// registry for everything else (grpc.health.v1, the reflection service itself).
type layeredResolver struct{ first, then *protoregistry.Files }

func (r layeredResolver) FindFileByPath(path string) (protoreflect.FileDescriptor, error) {
	if fd, err := r.first.FindFileByPath(path); err == nil {
		return fd, nil
	}
	return r.then.FindFileByPath(path)
}

func (r layeredResolver) FindDescriptorByName(name protoreflect.FullName) (protoreflect.Descriptor, error) {
	if d, err := r.first.FindDescriptorByName(name); err == nil {
		return d, nil
	}
	return r.then.FindDescriptorByName(name)
}

// registerReflection registers the v1 and v1alpha reflection services, answering with
// the documented descriptors; without them (a broken embed, which the tests catch) it
// falls back to the compiled-in, comment-free ones rather than failing to serve.
func registerReflection(s *grpc.Server) error {
	opts := reflection.ServerOptions{Services: s}
	files, err := documentedFiles()
	if err == nil {
		opts.DescriptorResolver = layeredResolver{first: files, then: protoregistry.GlobalFiles}
	}
	reflectionv1.RegisterServerReflectionServer(s, reflection.NewServerV1(opts))
	reflectionv1alpha.RegisterServerReflectionServer(s, reflection.NewServer(opts))
	return err
}
