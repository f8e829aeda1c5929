package access

import (
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base64"
	"encoding/hex"
	"errors"
	"fmt"
	"strings"
)

// SecretPrefix starts every secret halovet issues, so that a leaked one is recognised
// (by a secret scanner, or a person) as a halovet credential; "1" is the format version.
const SecretPrefix = "hvk1_"

// credentialIDLen is the length of a credential id: 16 hex digits (64 random bits).
const credentialIDLen = 16

// secretPartLen is the length of the random part: 256 bits in unpadded base64url.
const secretPartLen = 43

// Issued is a new credential's secret and what is stored of it.
type Issued struct {
	// CredentialID identifies the credential (it is part of the secret and not secret).
	CredentialID string
	// Secret is shown to the holder once and never stored.
	Secret string
	// Hash is the SHA-256 of Secret, the only form the database keeps.
	Hash []byte
}

// IssueSecret makes a new credential id and secret: SecretPrefix, the id, "_", and 256
// random bits in base64url.
func IssueSecret() (Issued, error) {
	var id [credentialIDLen / 2]byte
	var key [32]byte
	if _, err := rand.Read(id[:]); err != nil {
		return Issued{}, err
	}
	if _, err := rand.Read(key[:]); err != nil {
		return Issued{}, err
	}
	cid := hex.EncodeToString(id[:])
	secret := SecretPrefix + cid + "_" + base64.RawURLEncoding.EncodeToString(key[:])
	return Issued{CredentialID: cid, Secret: secret, Hash: HashSecret(secret)}, nil
}

// HashSecret is the stored form of a secret.
func HashSecret(secret string) []byte {
	h := sha256.Sum256([]byte(secret))
	return h[:]
}

// errMalformed is the reason given for a secret that is not of halovet's format.
var errMalformed = errors.New("the credential is malformed: expected " + SecretPrefix + "<16 hex digits>_<43 characters of base64url>, as `halovet credentials issue` printed it")

// ParseSecret returns the credential id inside secret, or an error saying what is wrong
// with its form (it does not say whether the credential exists).
func ParseSecret(secret string) (string, error) {
	rest, ok := strings.CutPrefix(secret, SecretPrefix)
	if !ok {
		return "", errMalformed
	}
	cid, key, ok := strings.Cut(rest, "_")
	if !ok || len(cid) != credentialIDLen || len(key) != secretPartLen {
		return "", errMalformed
	}
	if _, err := hex.DecodeString(cid); err != nil || strings.ToLower(cid) != cid {
		return "", errMalformed
	}
	if _, err := base64.RawURLEncoding.DecodeString(key); err != nil {
		return "", errMalformed
	}
	return cid, nil
}

// secretMatches compares a presented secret with a stored hash in constant time.
func secretMatches(secret string, hash []byte) bool {
	return subtle.ConstantTimeCompare(HashSecret(secret), hash) == 1
}

// ValidCredentialID reports whether id has the form of a credential id.
func ValidCredentialID(id string) error {
	if len(id) != credentialIDLen {
		return fmt.Errorf("a credential id is %d hex digits", credentialIDLen)
	}
	if _, err := hex.DecodeString(id); err != nil || strings.ToLower(id) != id {
		return fmt.Errorf("a credential id is %d lower-case hex digits", credentialIDLen)
	}
	return nil
}
