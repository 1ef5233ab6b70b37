package record

import (
	"bytes"
	"crypto/ed25519"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"

	"furrow/plan"
	"furrow/schema"
)

// EncodeRecord returns the bytes of audit.json for r: JSON indented by two
// spaces, HTML characters not escaped, a final newline. The integrity block
// is written as it is in r (see Seal).
func EncodeRecord(r *Result) ([]byte, error) {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(r); err != nil {
		return nil, fmt.Errorf("encoding audit record: %w", err)
	}
	return b.Bytes(), nil
}

// Seal computes the content hash of r and stores it, with a signature when
// key is non-nil, in r.Integrity.
func Seal(r *Result, key ed25519.PrivateKey) error {
	r.Integrity = Integrity{}
	if r.Files == nil {
		r.Files = []FileHash{}
	}
	b, err := EncodeRecord(r)
	if err != nil {
		return err
	}
	h, err := ContentHash(b)
	if err != nil {
		return err
	}
	r.Integrity.ContentHash = h
	if key != nil {
		r.Integrity.Signature = signContentHash(key, h, r.RunAt)
	}
	return nil
}

// ContentHash returns "sha256:<hex>" of the canonical content of an audit
// record given as JSON bytes.
//
// # Content hash
//
// The bytes hashed are obtained from the record file as follows, so that a
// reviewer can recompute the hash with any JSON library:
//
//  1. Parse the file as one JSON object. Numbers are kept as the exact
//     token text found in the file (no conversion to binary floating point).
//  2. Remove the top-level members "run_at" (the time of the run: kept
//     apart, so that the same plan on the same data gives the same hash
//     whenever it is run; a signature covers it), "plan_location" (where
//     the plan was, relative to the run directory: a hint for finding it,
//     which would otherwise make the hash depend on where the run
//     directory and the plan are) and "integrity" (the hash and signature
//     themselves). Everything else is hashed, "files" (the hashes of the
//     reports and tables) included.
//  3. Serialise the rest with no whitespace at all: object members sorted
//     by key in byte order, array order kept, number tokens written
//     verbatim, literals as true, false, null, and strings escaped as Go's
//     encoding/json does with HTML escaping off (\" \\ \n \r \t, other
//     control characters and U+2028, U+2029 as \u00XX / \u2028; everything
//     else as UTF-8).
//  4. The hash is "sha256:" followed by the lower-case hex SHA-256 of those bytes.
//
// A signature (furrow run --sign) is ed25519 over the bytes
// "furrow audit record v1\n", the content-hash string ("sha256:..."),
// "\nrun_at " and the record's run_at value, stored base64-encoded
// (standard, padded, canonical) with the signer's public key, so a signed
// record's run time is covered by its signature; an unsigned record's is
// covered by nothing, and verify says so.
//
// Two runs of the same plan on the same data give the same content hash,
// whenever they are made and wherever the plan and the run directory are.
func ContentHash(record []byte) (string, error) {
	dec := json.NewDecoder(bytes.NewReader(record))
	dec.UseNumber()
	var doc any
	if err := dec.Decode(&doc); err != nil {
		return "", fmt.Errorf("reading audit record: %w", err)
	}
	obj, ok := doc.(map[string]any)
	if !ok {
		return "", errors.New("reading audit record: not a JSON object")
	}
	content := make(map[string]any, len(obj))
	for k, v := range obj {
		if k == "run_at" || k == "plan_location" || k == "integrity" {
			continue
		}
		content[k] = v
	}
	var b bytes.Buffer
	if err := canonicalJSON(&b, content); err != nil {
		return "", err
	}
	sum := sha256.Sum256(b.Bytes())
	return "sha256:" + hex.EncodeToString(sum[:]), nil
}

// canonicalJSON writes v (from a UseNumber decode) with sorted keys and no
// whitespace.
func canonicalJSON(b *bytes.Buffer, v any) error {
	switch x := v.(type) {
	case map[string]any:
		keys := make([]string, 0, len(x))
		for k := range x {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		b.WriteByte('{')
		for i, k := range keys {
			if i > 0 {
				b.WriteByte(',')
			}
			writeJSONString(b, k)
			b.WriteByte(':')
			if err := canonicalJSON(b, x[k]); err != nil {
				return err
			}
		}
		b.WriteByte('}')
	case []any:
		b.WriteByte('[')
		for i, e := range x {
			if i > 0 {
				b.WriteByte(',')
			}
			if err := canonicalJSON(b, e); err != nil {
				return err
			}
		}
		b.WriteByte(']')
	case string:
		writeJSONString(b, x)
	case json.Number:
		b.WriteString(string(x))
	case bool:
		if x {
			b.WriteString("true")
		} else {
			b.WriteString("false")
		}
	case nil:
		b.WriteString("null")
	default:
		return fmt.Errorf("canonical form: unexpected value %T", v)
	}
	return nil
}

func writeJSONString(b *bytes.Buffer, s string) {
	var t bytes.Buffer
	enc := json.NewEncoder(&t)
	enc.SetEscapeHTML(false)
	_ = enc.Encode(s) // a string always encodes
	b.Write(bytes.TrimSuffix(t.Bytes(), []byte("\n")))
}

// Schema files (in package schema) of the two records this package writes.
const (
	AuditSchemaFile        = "audit.schema.json"
	RegistrationSchemaFile = "registration.schema.json"
)

// validateAgainst validates a decoded JSON document against an embedded schema.
func validateAgainst(file string, doc any, what string) error {
	s, err := schema.ByName(file)
	if err != nil {
		return fmt.Errorf("validating %s: %w", what, err)
	}
	probs := s.ValidateJSON(doc)
	if len(probs) == 0 {
		return nil
	}
	p := probs[0]
	where := p.Path
	if where == "" {
		where = "(root)"
	}
	more := ""
	if len(probs) > 1 {
		more = fmt.Sprintf(" (and %d more)", len(probs)-1)
	}
	return fmt.Errorf("%s does not match its schema: %s: %s%s", what, where, p.Summary, more)
}

// ValidateRecord checks audit-record bytes against the published schema
// (schema/audit.schema.json).
func ValidateRecord(record []byte) error {
	dec := json.NewDecoder(bytes.NewReader(record))
	dec.UseNumber()
	var doc any
	if err := dec.Decode(&doc); err != nil {
		return fmt.Errorf("reading audit record: %w", err)
	}
	return validateAgainst(AuditSchemaFile, doc, "audit record")
}

// ReadRecord reads DIR/audit.json (or a file path), validates it against
// the schema and decodes it. It returns the raw bytes too.
func ReadRecord(path string) (*Result, []byte, error) {
	if st, err := os.Stat(path); err == nil && st.IsDir() {
		path = filepath.Join(path, AuditFileName)
	}
	raw, err := plan.ReadFile(path, MaxRecordSize)
	if err != nil {
		return nil, nil, fmt.Errorf("reading audit record %s: %w", path, err)
	}
	if err := ValidateRecord(raw); err != nil {
		return nil, raw, err
	}
	var r Result
	if err := json.Unmarshal(raw, &r); err != nil {
		return nil, raw, fmt.Errorf("reading audit record %s: %w", path, err)
	}
	return &r, raw, nil
}

// WriteRecord seals r (signing with key when non-nil) and writes
// DIR/audit.json atomically. DIR must exist.
func WriteRecord(dir string, r *Result, key ed25519.PrivateKey) error {
	if err := Seal(r, key); err != nil {
		return err
	}
	b, err := EncodeRecord(r)
	if err != nil {
		return err
	}
	return WriteFileAtomic(filepath.Join(dir, AuditFileName), b, 0o644, false)
}

// Sizes above which the files furrow reads besides plans and data are
// refused, and the reads are bounded, so that a named pipe or an endless
// device given as one never blocks or fills memory (plan.ReadFile refuses
// anything that is not a regular file).
const (
	MaxRecordSize       = 4 << 30  // an audit record (it holds the per-observation vectors)
	MaxRegistrationSize = 16 << 20 // a registration record
	MaxKeySize          = 64 << 10 // a key file
)

// SHA256Hex returns "sha256:<hex>" of b.
func SHA256Hex(b []byte) string {
	sum := sha256.Sum256(b)
	return "sha256:" + hex.EncodeToString(sum[:])
}
