package service

import (
	"context"
	"crypto/hmac"
	"encoding/base64"
	"encoding/json"
	"errors"
	"fmt"
	"strconv"
	"strings"

	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/store"
)

// Every list of the API comes in pages: page_size rows at most (1 to maxListPage; 0 means
// defaultListPage) and a next_page_token, empty on the last page. The lists of the
// register page by keyset (store.Page): a token carries the page key of the last row it
// followed, signed like every page token (pagetoken.go) and bound to the list and to the
// call's filters, so a row added or removed between two calls never makes a page repeat or
// skip a row that was there throughout.

const (
	// defaultListPage is the page size of a list call that gives page_size 0.
	defaultListPage = 100
	// maxListPage is the largest page_size of a list (ListEntries keeps its own bound).
	maxListPage = 1000
	// maxKeyTokenChars bounds a keyed page token: a page key holds at most a few entry
	// keys of maxEntryKeyBytes.
	maxKeyTokenChars = 4096
)

// pagedRequest is a list request: its filters, a page size and a page token.
type pagedRequest interface {
	proto.Message
	GetPageSize() int32
	GetPageToken() string
}

// issuePageKey returns the token that continues list kind, with the filters of hash
// filters, after the row whose page key is key.
func (s *Server) issuePageKey(ctx context.Context, kind string, filters uint64, key []string) (string, error) {
	k, err := s.pageKey(ctx)
	if err != nil {
		return "", err
	}
	b, err := json.Marshal(key)
	if err != nil {
		return "", err
	}
	payload := kind + "." + strconv.FormatUint(filters, 16) + ".k" + base64.RawURLEncoding.EncodeToString(b)
	return base64.RawURLEncoding.EncodeToString([]byte(payload)) + "." + base64.RawURLEncoding.EncodeToString(pageMAC(k, payload)), nil
}

// openPageKey returns the page key a token of list kind with these filters carries; a
// database failure reading the signing key is returned as such, any fault of the token as
// errPageToken.
func (s *Server) openPageKey(ctx context.Context, kind string, filters uint64, tok string) ([]string, error) {
	k, err := s.pageKey(ctx)
	if err != nil {
		return nil, err
	}
	p, sig, ok := strings.Cut(tok, ".")
	if !ok || len(tok) > maxKeyTokenChars {
		return nil, errPageToken
	}
	payload, err1 := base64.RawURLEncoding.DecodeString(p)
	mac, err2 := base64.RawURLEncoding.DecodeString(sig)
	if err1 != nil || err2 != nil || !hmac.Equal(mac, pageMAC(k, string(payload))) {
		return nil, errPageToken
	}
	parts := strings.Split(string(payload), ".")
	if len(parts) != 3 || parts[0] != kind || parts[1] != strconv.FormatUint(filters, 16) || !strings.HasPrefix(parts[2], "k") {
		return nil, errPageToken
	}
	b, err := base64.RawURLEncoding.DecodeString(parts[2][1:])
	var key []string
	if err != nil || json.Unmarshal(b, &key) != nil || len(key) == 0 {
		return nil, errPageToken
	}
	return key, nil
}

// openPage reads a list request's page_size and page_token into the store.Page to ask
// for: one row more than the page holds, which tells whether there is a next page. Bad
// values come back as violations naming the field; a database failure as the error.
func (s *Server) openPage(ctx context.Context, kind string, req pagedRequest) (store.Page, []fieldViolation, error) {
	var vs []fieldViolation
	p := store.Page{Limit: defaultListPage + 1}
	switch n := req.GetPageSize(); {
	case n < 0 || n > maxListPage:
		vs = append(vs, fieldViolation{"page_size", fmt.Sprintf("is %d; accepted: 1 to %d, or 0 for %d", n, maxListPage, defaultListPage)})
	case n > 0:
		p.Limit = int(n) + 1
	}
	if tok := req.GetPageToken(); tok != "" {
		key, err := s.openPageKey(ctx, kind, filterHash(req), tok)
		switch {
		case errors.Is(err, errPageToken):
			vs = append(vs, fieldViolation{"page_token", err.Error()})
		case err != nil:
			return p, nil, err
		}
		p.After = key
	}
	return p, vs, nil
}

// keyed is a row of a keyset-paged list.
type keyed interface{ PageKey() []string }

// closePage cuts the rows a store.Page from openPage returned to the page and returns the
// next_page_token: empty when they are the last.
func closePage[T keyed](ctx context.Context, s *Server, kind string, req pagedRequest, p store.Page, rows []T) ([]T, string, error) {
	if len(rows) < p.Limit {
		return rows, "", nil
	}
	rows = rows[:p.Limit-1]
	tok, err := s.issuePageKey(ctx, kind, filterHash(req), rows[len(rows)-1].PageKey())
	return rows, tok, err
}
