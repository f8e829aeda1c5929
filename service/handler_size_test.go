package service

import (
	"go/ast"
	"go/parser"
	"go/token"
	"path/filepath"
	"strings"
	"testing"

	"google.golang.org/protobuf/reflect/protoreflect"
	"google.golang.org/protobuf/reflect/protoregistry"

	_ "github.com/halovet/halovet/proto/halovet/v1"
)

// maxHandlerLines is how long an RPC handler may be: it decodes the request, calls the
// workflow (package ledger) or the store, and encodes the answer; decoding of a large
// message belongs in a function of its own.
const maxHandlerLines = 40

// TestHandlersStayThin fails when the method implementing an RPC of a halovet service is
// longer than maxHandlerLines: workflow belongs in ledger, not at the wire.
func TestHandlersStayThin(t *testing.T) {
	rpcs := map[string]bool{}
	protoregistry.GlobalFiles.RangeFilesByPackage("halovet.v1", func(fd protoreflect.FileDescriptor) bool {
		for i := range fd.Services().Len() {
			ms := fd.Services().Get(i).Methods()
			for j := range ms.Len() {
				rpcs[string(ms.Get(j).Name())] = true
			}
		}
		return true
	})
	if len(rpcs) < 40 {
		t.Fatalf("found %d RPCs in the halovet.v1 descriptors; want the whole API", len(rpcs))
	}
	files, err := filepath.Glob("*.go")
	if err != nil {
		t.Fatal(err)
	}
	fs := token.NewFileSet()
	found := 0
	for _, f := range files {
		if strings.HasSuffix(f, "_test.go") {
			continue
		}
		af, err := parser.ParseFile(fs, f, nil, 0)
		if err != nil {
			t.Fatal(err)
		}
		for _, d := range af.Decls {
			fd, ok := d.(*ast.FuncDecl)
			if !ok || fd.Recv == nil || fd.Body == nil || !rpcs[fd.Name.Name] || !strings.HasSuffix(receiverType(fd), "Server") {
				continue
			}
			found++
			if n := fs.Position(fd.End()).Line - fs.Position(fd.Pos()).Line + 1; n > maxHandlerLines {
				t.Errorf("%s: handler %s is %d lines; at most %d (move the workflow into ledger, decoding into a function)", f, fd.Name.Name, n, maxHandlerLines)
			}
		}
	}
	if found < len(rpcs)/2 {
		t.Errorf("found %d handlers for %d RPCs; the receiver naming (xxxServer) has changed?", found, len(rpcs))
	}
}

func receiverType(fd *ast.FuncDecl) string {
	e := fd.Recv.List[0].Type
	if s, ok := e.(*ast.StarExpr); ok {
		e = s.X
	}
	if id, ok := e.(*ast.Ident); ok {
		return id.Name
	}
	return ""
}
