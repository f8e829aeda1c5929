package service

import (
	"context"
	"crypto/hmac"
	"crypto/sha256"
	"encoding/base64"
	"errors"
	"hash/fnv"
	"strconv"
	"strings"
	"sync"

	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protoreflect"
)

// Page tokens are opaque to clients and signed: a token names the list it belongs to, a hash
// of that call's filters and the position to go on from, followed by an HMAC-SHA-256 (first
// 16 bytes) under a key every replica reads from the database (store.PageTokenKey). A token
// another replica issued is accepted; one a client made or altered, or one reused with other
// filters, is refused naming page_token.

// errPageToken is the reason a page token is refused.
var errPageToken = errors.New("is not a token this list gave for these filters; start again without page_token")

type pageSigner struct {
	mu  sync.Mutex
	key []byte
}

// pageKey returns the signing key, read once from the database.
func (s *Server) pageKey(ctx context.Context) ([]byte, error) {
	s.pages.mu.Lock()
	defer s.pages.mu.Unlock()
	if s.pages.key == nil {
		k, err := s.store.PageTokenKey(ctx)
		if err != nil {
			return nil, err
		}
		s.pages.key = k
	}
	return s.pages.key, nil
}

func pageMAC(key []byte, payload string) []byte {
	m := hmac.New(sha256.New, key)
	m.Write([]byte(payload))
	return m.Sum(nil)[:16]
}

// issuePageToken returns the token for list kind, filters hash and position pos.
func (s *Server) issuePageToken(ctx context.Context, kind string, filters uint64, pos int64) (string, error) {
	key, err := s.pageKey(ctx)
	if err != nil {
		return "", err
	}
	payload := kind + "." + strconv.FormatUint(filters, 16) + "." + strconv.FormatInt(pos, 10)
	return base64.RawURLEncoding.EncodeToString([]byte(payload)) + "." + base64.RawURLEncoding.EncodeToString(pageMAC(key, payload)), nil
}

// openPageToken returns the position a token of list kind with these filters carries; a
// database failure reading the key is returned as such, any fault of the token as
// errPageToken.
func (s *Server) openPageToken(ctx context.Context, kind string, filters uint64, tok string) (int64, error) {
	key, err := s.pageKey(ctx)
	if err != nil {
		return 0, err
	}
	p, sig, ok := strings.Cut(tok, ".")
	if !ok || len(tok) > 200 {
		return 0, errPageToken
	}
	payload, err1 := base64.RawURLEncoding.DecodeString(p)
	mac, err2 := base64.RawURLEncoding.DecodeString(sig)
	if err1 != nil || err2 != nil || !hmac.Equal(mac, pageMAC(key, string(payload))) {
		return 0, errPageToken
	}
	parts := strings.Split(string(payload), ".")
	if len(parts) != 3 || parts[0] != kind || parts[1] != strconv.FormatUint(filters, 16) {
		return 0, errPageToken
	}
	pos, err := strconv.ParseInt(parts[2], 10, 64)
	if err != nil || pos < 0 {
		return 0, errPageToken
	}
	return pos, nil
}

// filterHash ties a page token to a list call's filters: a hash of the request with its
// page_token and page_size cleared.
func filterHash(req proto.Message) uint64 {
	c := proto.Clone(req)
	m := c.ProtoReflect()
	for _, name := range []protoreflect.Name{"page_token", "page_size"} {
		if fd := m.Descriptor().Fields().ByName(name); fd != nil {
			m.Clear(fd)
		}
	}
	b, _ := proto.MarshalOptions{Deterministic: true}.Marshal(c)
	h := fnv.New64a()
	h.Write(b)
	return h.Sum64()
}
