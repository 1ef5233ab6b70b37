package record

import (
	"crypto/ed25519"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"runtime"
	"strings"

	"furrow/plan"
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

// keyEncoding decodes keys and signatures: standard padded base64, and
// only its canonical form (a text with other padding bits, which would
// decode to the same bytes, is refused), so that a key or signature has
// exactly one spelling.
var keyEncoding = base64.StdEncoding.Strict()

// Fingerprint names a public key briefly: "sha256:" and the first 16 hex
// digits of the SHA-256 of its 32 bytes. verify prints it for a signed
// record, keygen for a new key.
func Fingerprint(pub ed25519.PublicKey) string {
	sum := sha256.Sum256(pub)
	return "sha256:" + hex.EncodeToString(sum[:8])
}

// KeyModeError is ReadPrivateKeyFile's error for a private key file that
// its group or others may read.
type KeyModeError struct {
	// Path is the key file as given.
	Path string
	// Mode is its permission bits.
	Mode os.FileMode
}

// Error says why the key is refused and how to restrict it.
func (e *KeyModeError) Error() string {
	return fmt.Sprintf("%s: the private key file may be read by others (mode %04o); a signature shows who signed only while the key is the signer's alone: restrict it with chmod 600 %s", e.Path, e.Mode.Perm(), e.Path)
}

// ReadPrivateKeyFile reads a private key file made by furrow keygen. It
// refuses a file that its group or others may read (mode & 0o077 != 0)
// with a *KeyModeError; Windows has no such mode bits and is not checked.
func ReadPrivateKeyFile(path string) (ed25519.PrivateKey, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("reading private key: %w", err)
	}
	if runtime.GOOS != "windows" && st.Mode().Perm()&0o077 != 0 {
		return nil, &KeyModeError{Path: path, Mode: st.Mode().Perm()}
	}
	b, err := plan.ReadFile(path, MaxKeySize)
	if err != nil {
		return nil, fmt.Errorf("reading private key %s: %w", path, err)
	}
	key, err := ParsePrivateKey(string(b))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return key, nil
}

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
	b, err := keyEncoding.DecodeString(rest)
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
	b, err := keyEncoding.DecodeString(rest)
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
// hash and the run time (which the content hash covers too; its own line
// keeps the signed bytes those of the first records).
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
	raw, err := keyEncoding.DecodeString(sig.Value)
	if err != nil {
		return errors.New("malformed signature value")
	}
	if !ed25519.Verify(pub, signedBytes(contentHash, runAt), raw) {
		return errors.New("signature does not match the record's content hash and run time")
	}
	return nil
}
