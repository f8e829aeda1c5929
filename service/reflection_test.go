package service_test

import (
	"context"
	"strings"
	"testing"

	reflectionv1 "google.golang.org/grpc/reflection/grpc_reflection_v1"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protodesc"
	"google.golang.org/protobuf/reflect/protoreflect"
	"google.golang.org/protobuf/types/descriptorpb"
)

// TestReflectionServesComments asks the running server's reflection service, as grpcurl
// describe does, for each halovet service's file, and requires a comment on every service,
// method, message and field in it, the text being the one in the .proto.
func TestReflectionServesComments(t *testing.T) {
	t.Parallel()
	conn, _ := startTestServer(t)
	stream, err := reflectionv1.NewServerReflectionClient(conn).ServerReflectionInfo(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	defer stream.CloseSend()
	ask := func(req *reflectionv1.ServerReflectionRequest) *reflectionv1.ServerReflectionResponse {
		t.Helper()
		if err := stream.Send(req); err != nil {
			t.Fatal(err)
		}
		resp, err := stream.Recv()
		if err != nil {
			t.Fatal(err)
		}
		if e := resp.GetErrorResponse(); e != nil {
			t.Fatalf("reflection error for %v: %s", req.GetMessageRequest(), e.GetErrorMessage())
		}
		return resp
	}
	list := ask(&reflectionv1.ServerReflectionRequest{MessageRequest: &reflectionv1.ServerReflectionRequest_ListServices{}})
	var services []string
	for _, s := range list.GetListServicesResponse().GetService() {
		if strings.HasPrefix(s.GetName(), "halovet.") {
			services = append(services, s.GetName())
		}
	}
	if len(services) < 5 {
		t.Fatalf("reflection lists halovet services %v; want at least the five of proto/", services)
	}
	all, have := &descriptorpb.FileDescriptorSet{}, map[string]bool{}
	for _, name := range services {
		resp := ask(&reflectionv1.ServerReflectionRequest{MessageRequest: &reflectionv1.ServerReflectionRequest_FileContainingSymbol{FileContainingSymbol: name}})
		set := &descriptorpb.FileDescriptorSet{}
		for _, raw := range resp.GetFileDescriptorResponse().GetFileDescriptorProto() {
			fdp := &descriptorpb.FileDescriptorProto{}
			if err := proto.Unmarshal(raw, fdp); err != nil {
				t.Fatal(err)
			}
			set.File = append(set.File, fdp)
		}
		var target *descriptorpb.FileDescriptorProto
		for _, f := range set.File {
			for _, s := range f.GetService() {
				if f.GetPackage()+"."+s.GetName() == name {
					target = f
				}
			}
		}
		if target == nil {
			t.Fatalf("%s: no file in the answer declares it", name)
		}
		// Each request's answer holds the file and the imports not sent before on this stream.
		for _, f := range set.File {
			if !have[f.GetName()] {
				have[f.GetName()] = true
				all.File = append(all.File, f)
			}
		}
		seen, err := protodesc.NewFiles(all)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		fd, err := seen.FindFileByPath(target.GetName())
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		checkDocumented(t, fd.Services().ByName(protoreflect.FullName(name).Name()))
		msgs := fd.Messages()
		for i := 0; i < msgs.Len(); i++ {
			checkDocumented(t, msgs.Get(i))
			fields := msgs.Get(i).Fields()
			for j := 0; j < fields.Len(); j++ {
				checkDocumented(t, fields.Get(j))
			}
		}
		methods := fd.Services().ByName(protoreflect.FullName(name).Name()).Methods()
		for i := 0; i < methods.Len(); i++ {
			checkDocumented(t, methods.Get(i))
		}
	}
}

func checkDocumented(t *testing.T, d protoreflect.Descriptor) {
	t.Helper()
	loc := d.ParentFile().SourceLocations().ByDescriptor(d)
	if strings.TrimSpace(loc.LeadingComments) == "" && strings.TrimSpace(loc.TrailingComments) == "" {
		t.Errorf("%s: reflection serves it without its comment", d.FullName())
	}
}
