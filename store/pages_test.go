package store_test

import (
	"context"
	"fmt"
	"slices"
	"testing"

	"github.com/halovet/halovet/access"
	"github.com/halovet/halovet/store"
)

// Credentials are listed newest first, then by id: credentials created at the same
// instant (made so here) page one at a time each once, in the order of the whole list,
// and a malformed page key is an error, never a silent first page.
func TestListCredentialsPageOnTies(t *testing.T) {
	st, _ := openTestStore(t)
	ctx := context.Background()
	for i := range 5 {
		if _, _, err := st.IssueCredential(ctx, store.NewCredential{Name: fmt.Sprintf("tie-%d", i), Role: access.RoleReader}); err != nil {
			t.Fatal(err)
		}
	}
	// Three of the five at one instant, between the other two.
	if _, err := st.Pool().Exec(ctx, `UPDATE credentials SET created_at = '2026-03-01T10:00:00.123456Z'
	    WHERE name IN ('tie-1', 'tie-2', 'tie-3')`); err != nil {
		t.Fatal(err)
	}
	if _, err := st.Pool().Exec(ctx, `UPDATE credentials SET created_at = '2026-03-02T00:00:00Z' WHERE name = 'tie-0';
	    UPDATE credentials SET created_at = '2026-02-28T00:00:00Z' WHERE name = 'tie-4'`); err != nil {
		t.Fatal(err)
	}
	whole, err := st.ListCredentials(ctx, false)
	if err != nil {
		t.Fatal(err)
	}
	var ids, paged []string
	for _, c := range whole {
		ids = append(ids, c.ID)
	}
	if len(ids) != 5 || whole[0].Name != "tie-0" || whole[4].Name != "tie-4" {
		t.Fatalf("whole list %v; want tie-0 first and tie-4 last", whole)
	}
	p := store.Page{Limit: 1}
	for range 10 {
		page, err := st.ListCredentialsPage(ctx, false, p)
		if err != nil {
			t.Fatal(err)
		}
		if len(page) == 0 {
			break
		}
		paged = append(paged, page[0].ID)
		p.After = page[0].PageKey()
	}
	if !slices.Equal(paged, ids) {
		t.Errorf("paged one at a time: %v; want the whole list's order %v", paged, ids)
	}
	if _, err := st.ListCredentialsPage(ctx, false, store.Page{After: []string{"not a time", "x"}}); err == nil {
		t.Errorf("a page key without a time was taken")
	}
	if _, err := st.ListNationalEntriesPage(ctx, 0, store.Page{After: []string{"2026"}}); err == nil {
		t.Errorf("a page key of 1 value for a list ordered by 4 columns was taken")
	}
	if _, err := st.ClosedYearsPage(ctx, store.Page{After: []string{"twenty"}}); err == nil {
		t.Errorf("a page key with a word for a year was taken")
	}
}
