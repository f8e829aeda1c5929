package access

import (
	"os"
	"strings"
	"testing"
)

// TestReadmeRoleTableIsThePolicy: the role table in README.md's "Access" section is the
// one RoleTable prints from Policy; regenerate it when the policy changes.
func TestReadmeRoleTableIsThePolicy(t *testing.T) {
	b, err := os.ReadFile("../README.md")
	if err != nil {
		t.Fatal(err)
	}
	const start, end = "checked by access/readme_test.go -->\n", "<!-- end of role table -->"
	s := string(b)
	i, j := strings.Index(s, start), strings.Index(s, end)
	if i < 0 || j < i {
		t.Fatal("README.md has no role table between its markers")
	}
	if got, want := s[i+len(start):j], RoleTable(); got != want {
		t.Fatalf("README.md's role table differs from access.RoleTable(); paste this:\n%s", want)
	}
}
