// Package access says who may do what in halovet: the roles, the one policy table of every
// RPC against every role (default deny), the credentials halovet issues (their secret
// format and hashing) and the authentication of a presented secret. It imports neither
// gRPC nor pgx: the transport (package service) asks it, and so may any other front end
// (the web console).
//
// The stable API, for other front ends:
//
//	a := access.NewAuthenticator(src, access.AuthOptions{})  // src: e.g. *store.Store
//	id, err := a.Authenticate(ctx, secret)                     // Identity{CredentialID, Name, Role, Company}
//	if errors.Is(err, access.ErrUnauthenticated) { ... }      // err's text is the reason
//	ok := access.Allowed(id.Role, "/halovet.v1.LicensingService/GetLicence")
//
// Authenticate accepts a secret as IssueSecret made it ("hvk1_" + credential id + "_" +
// 43 characters of base64url), looks the credential up by id, compares the SHA-256 of the
// secret with the stored hash in constant time, and refuses an expired or revoked
// credential. What it read is cached for at most AuthOptions.CacheTTL (1 s by default),
// so a revocation is seen by every replica within that time.
//
// TokenVerifier (NewTokenVerifier) does the same for OpenID Connect bearer tokens of one
// issuer and audience, reading the role and a trader's company from claims.
//
// Allowed answers from Policy: a method absent from the table is refused to every role,
// and RoleAnonymous is allowed only what is marked public (health, reflection).
// CompanyScoped(role) says whether the workflow layer must also restrict the call to the
// identity's company (a trader's).
package access
