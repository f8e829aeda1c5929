package halovetv1

// Written by hand, like descriptors.go: a client's helper for the lists of the API, which
// all come in pages (page_size, page_token, next_page_token).

import (
	"context"
	"fmt"

	"google.golang.org/grpc"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protoreflect"
)

// ReadAllPages calls a List RPC (call, e.g. a client's ListLicences) with req, then again
// with every next_page_token it answers, and returns the first page's response with its
// repeated field rows holding the rows of every page in order; its other fields are the
// first page's and next_page_token is cleared. req is not changed; its page_size is the
// size of every page (0: the list's default).
func ReadAllPages[Req, Resp proto.Message](ctx context.Context, call func(context.Context, Req, ...grpc.CallOption) (Resp, error),
	req Req, rows protoreflect.Name, opts ...grpc.CallOption) (Resp, error) {
	var none Resp
	r := proto.Clone(req).(Req)
	rm := r.ProtoReflect()
	tokField := rm.Descriptor().Fields().ByName("page_token")
	if tokField == nil {
		return none, fmt.Errorf("%s has no page_token", rm.Descriptor().FullName())
	}
	first, err := call(ctx, r, opts...)
	if err != nil {
		return none, err
	}
	fm := first.ProtoReflect()
	rowsField, nextField := fm.Descriptor().Fields().ByName(rows), fm.Descriptor().Fields().ByName("next_page_token")
	if rowsField == nil || !rowsField.IsList() || nextField == nil {
		return none, fmt.Errorf("%s has no repeated field %s or no next_page_token", fm.Descriptor().FullName(), rows)
	}
	all := fm.Mutable(rowsField).List()
	seen := map[string]bool{}
	for tok := fm.Get(nextField).String(); tok != ""; {
		if seen[tok] {
			return none, fmt.Errorf("%s answered the same next_page_token twice", fm.Descriptor().FullName())
		}
		seen[tok] = true
		rm.Set(tokField, protoreflect.ValueOfString(tok))
		page, err := call(ctx, r, opts...)
		if err != nil {
			return none, err
		}
		pm := page.ProtoReflect()
		l := pm.Get(rowsField).List()
		for i := 0; i < l.Len(); i++ {
			all.Append(l.Get(i))
		}
		tok = pm.Get(nextField).String()
	}
	fm.Clear(nextField)
	return first, nil
}
