// Package pseudonym replaces study ids by keyed hashes (HMAC-SHA256, RFC 2104), so that no
// output, piece or model holds a study id, and identifies a key by a fingerprint that does not
// reveal it.
package pseudonym

import (
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"os"
)

// ErrShortKey is wrapped by the error on a key of fewer than 16 bytes.
var ErrShortKey = errors.New("pseudonym: key too short")

// LoadKey reads a pseudonymization key: the whole file, at least 16 bytes. The key stays with
// the analyst; the same key gives the same pseudonyms in every run.
func LoadKey(path string) ([]byte, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("%s: cannot read the pseudonymization key: %w", path, err)
	}
	if len(b) < 16 {
		return nil, fmt.Errorf("%s: the pseudonymization key has %d bytes: %w; use at least 16 random bytes (e.g. head -c 32 /dev/urandom > key)", path, len(b), ErrShortKey)
	}
	return b, nil
}

// Of is the keyed hash of a participant id: "ps-" and the first 16 hex digits of
// HMAC-SHA256(key, id) (RFC 2104; FIPS 180-4).
func Of(key []byte, id string) string {
	m := hmac.New(sha256.New, key)
	m.Write([]byte(id))
	return "ps-" + hex.EncodeToString(m.Sum(nil))[:16]
}

// keyLabel is the fixed text whose HMAC with the key is the key's fingerprint.
const keyLabel = "cohortmix pseudonymization key fingerprint"

// Fingerprint identifies a key without revealing it: the first 16 hex digits of
// HMAC-SHA256(key, a fixed label). The model file records it, so that a later run can tell the
// same key from another one.
func Fingerprint(key []byte) string {
	m := hmac.New(sha256.New, key)
	m.Write([]byte(keyLabel))
	return hex.EncodeToString(m.Sum(nil))[:16]
}

// ErrKey is wrapped by errors about a pseudonymization key that does not fit the model.
var ErrKey = errors.New("pseudonymization key does not fit the model")
