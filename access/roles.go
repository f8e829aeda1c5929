package access

import (
	"fmt"
	"strings"
)

// Role is what an identity may do; the policy table grants methods per role.
type Role string

// The roles. Their names are halovet's own.
const (
	// RoleAnonymous is a call without any credential: health and reflection only.
	RoleAnonymous Role = ""
	// RoleOfficer is the licensing authority's officer: everything, credentials included.
	RoleOfficer Role = "officer"
	// RoleCustoms checks and records any company's shipments and reads licences and balances.
	RoleCustoms Role = "customs"
	// RoleTrader is bound to one company: it checks and records that company's shipments
	// and reads that company's licences and balances, nothing else.
	RoleTrader Role = "trader"
	// RoleAuditor reads everything, the audit trail and the credentials included, and
	// changes nothing.
	RoleAuditor Role = "auditor"
	// RoleReader reads the catalogue and the public party settings.
	RoleReader Role = "reader"
)

// Roles lists the roles a credential may carry, in the order tables show them.
var Roles = []Role{RoleOfficer, RoleCustoms, RoleTrader, RoleAuditor, RoleReader}

// ParseRole reads a role name (case-insensitive; the wire name ROLE_OFFICER too); the error
// says which names are accepted.
func ParseRole(s string) (Role, error) {
	t := strings.ToLower(strings.TrimSpace(s))
	r := Role(strings.TrimPrefix(t, "role_"))
	for _, x := range Roles {
		if r == x {
			return r, nil
		}
	}
	names := make([]string, len(Roles))
	for i, x := range Roles {
		names[i] = string(x)
	}
	return "", fmt.Errorf("role %q is not one of %s", s, strings.Join(names, ", "))
}

// CompanyScoped reports whether the role's calls are limited to the identity's company.
func CompanyScoped(r Role) bool { return r == RoleTrader }

// Identity is who is behind a call.
type Identity struct {
	// CredentialID is the id of the credential presented ("" for an identity established
	// otherwise, e.g. open access).
	CredentialID string
	// Name names the person or system, as the credential was issued (or the mapped
	// certificate subject).
	Name string
	// Role is what the identity may do.
	Role Role
	// Company is the company a trader is bound to; empty for the other roles.
	Company string
	// Via says how the identity was established: "credential", "certificate", "open".
	Via string
}
