package record

import (
	"crypto/ed25519"
	"crypto/rand"
	"encoding/base64"
	"errors"
	"fmt"
	"io"
	"strings"
)

// Key-file prefixes. A private key carries a different literal prefix so
// that it can never be mistaken for (or accepted as) a public key.
const (
	PublicKeyPrefix  = "furrow-ed25519-public:"
	PrivateKeyPrefix = "furrow-ed25519-PRIVATE-KEY:"
)

// signatureDomain is prepended to the content hash before signing, so that
// a furrow signature cannot be replayed as a signature of anything else.
const signatureDomain = "furrow audit record v1\n"

// GenerateKey makes an ed25519 key pair from the random source r (nil =
// crypto/rand) and returns both keys in furrow's text format, each one line
// with a final newline.
func GenerateKey(r io.Reader) (public, private string, err error) {
	if r == nil {
		r = rand.Reader
	}
	pub, priv, err := ed25519.GenerateKey(r)
	if err != nil {
		return "", "", fmt.Errorf("generating key: %w", err)
	}
	public = PublicKeyPrefix + base64.StdEncoding.EncodeToString(pub) + "\n"
	private = PrivateKeyPrefix + base64.StdEncoding.EncodeToString(priv.Seed()) + "\n"
	return public, private, nil
}

// ParsePublicKey reads a public key in furrow's text format.
func ParsePublicKey(text string) (ed25519.PublicKey, error) {
	s := strings.TrimSpace(text)
	if strings.HasPrefix(s, PrivateKeyPrefix) {
		return nil, errors.New("this is a private key; give the public key (.pub) instead")
	}
	rest, ok := strings.CutPrefix(s, PublicKeyPrefix)
	if !ok {
		return nil, fmt.Errorf("not a furrow public key (expected prefix %q)", PublicKeyPrefix)
	}
	b, err := base64.StdEncoding.DecodeString(rest)
	if err != nil || len(b) != ed25519.PublicKeySize {
		return nil, errors.New("malformed public key")
	}
	return ed25519.PublicKey(b), nil
}

// ParsePrivateKey reads a private key in furrow's text format.
func ParsePrivateKey(text string) (ed25519.PrivateKey, error) {
	s := strings.TrimSpace(text)
	if strings.HasPrefix(s, PublicKeyPrefix) {
		return nil, errors.New("this is a public key; signing needs the private key")
	}
	rest, ok := strings.CutPrefix(s, PrivateKeyPrefix)
	if !ok {
		return nil, fmt.Errorf("not a furrow private key (expected prefix %q)", PrivateKeyPrefix)
	}
	b, err := base64.StdEncoding.DecodeString(rest)
	if err != nil || len(b) != ed25519.SeedSize {
		return nil, errors.New("malformed private key")
	}
	return ed25519.NewKeyFromSeed(b), nil
}

// formatPublicKey returns the text form of a public key (no newline).
func formatPublicKey(pub ed25519.PublicKey) string {
	return PublicKeyPrefix + base64.StdEncoding.EncodeToString(pub)
}

// signedBytes is what a signature covers: the domain line, the content
// hash and the run time. The run time is kept out of the content hash so
// that two runs give identical records; the signature binds it, so a signed
// record's time (which verify compares with the registration) cannot be
// moved without showing.
func signedBytes(contentHash, runAt string) []byte {
	return []byte(signatureDomain + contentHash + "\nrun_at " + runAt)
}

// signContentHash signs the content-hash string and the run time.
func signContentHash(priv ed25519.PrivateKey, contentHash, runAt string) *Signature {
	sig := ed25519.Sign(priv, signedBytes(contentHash, runAt))
	return &Signature{
		Algorithm: "ed25519",
		PublicKey: formatPublicKey(priv.Public().(ed25519.PublicKey)),
		Value:     base64.StdEncoding.EncodeToString(sig),
	}
}

// VerifySignature checks sig over contentHash and runAt. When want is
// non-nil the signature must have been made by that key.
func VerifySignature(sig *Signature, contentHash, runAt string, want ed25519.PublicKey) error {
	if sig.Algorithm != "ed25519" {
		return fmt.Errorf("unknown signature algorithm %q", sig.Algorithm)
	}
	pub, err := ParsePublicKey(sig.PublicKey)
	if err != nil {
		return fmt.Errorf("signature public key: %w", err)
	}
	if want != nil && !pub.Equal(want) {
		return errors.New("the record was signed with a different key than the one given")
	}
	raw, err := base64.StdEncoding.DecodeString(sig.Value)
	if err != nil {
		return errors.New("malformed signature value")
	}
	if !ed25519.Verify(pub, signedBytes(contentHash, runAt), raw) {
		return errors.New("signature does not match the record's content hash and run time")
	}
	return nil
}
