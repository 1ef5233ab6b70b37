package plan_test

import (
	"furrow/checker/method"
	"furrow/plan"

	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestByteSize(t *testing.T) {
	for n, want := range map[int64]string{
		0: "0 bytes", 1023: "1023 bytes", 1024: "1 KiB (1024 bytes)", 1536: "1.5 KiB (1536 bytes)",
		2 << 30: "2 GiB (2147483648 bytes)", 3<<20 + 1<<19: "3.5 MiB (3670016 bytes)",
		2000: "1.95 KiB (2000 bytes)", 11309422: "10.8 MiB (11309422 bytes)", 1048570381: "1000 MiB (1048570381 bytes)",
	} {
		if got := plan.ByteSize(n); got != want {
			t.Errorf("ByteSize(%d) = %q, want %q", n, got, want)
		}
	}
}

func TestReadFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "f.txt")
	if err := os.WriteFile(path, []byte("0123456789"), 0o644); err != nil {
		t.Fatal(err)
	}
	if b, err := plan.ReadFile(path, 10); err != nil || string(b) != "0123456789" {
		t.Errorf("at the limit: %q %v", b, err)
	}
	_, err := plan.ReadFile(path, 9)
	var big *plan.TooLargeError
	if !errors.As(err, &big) || big.Size != 10 || big.Limit != 9 || err.Error() != "the file is 10 bytes, over the limit of 9 bytes" {
		t.Errorf("over the limit: %v", err)
	}
	if _, err := plan.ReadFile(dir, 10); err == nil || err.Error() != "it is a directory, not a regular file; only regular files are read" {
		t.Errorf("directory: %v", err)
	}
	if _, err := plan.ReadFile(filepath.Join(dir, "absent"), 10); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("absent: %v", err)
	}
	// Load words a plan over MaxSize as a finding, and a folder as an error.
	big2 := filepath.Join(dir, "big.yaml")
	if err := os.WriteFile(big2, []byte(strings.Repeat("#\n", plan.MaxSize)), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, ds, err := plan.Load(big2, method.Default); err != nil || len(ds) != 1 || ds[0].Code != "too-large" {
		t.Errorf("large plan: %v %v", ds, err)
	}
	if _, _, err := plan.Load(dir, method.Default); err == nil || !strings.Contains(err.Error(), "reading plan "+dir+": it is a directory") {
		t.Errorf("folder as plan: %v", err)
	}
}

func TestTextEncoding(t *testing.T) {
	text := "furrow: 1\ntrial:\n  id: X\n"
	u16 := func(be bool) []byte {
		var b []byte
		for _, r := range text {
			if be {
				b = append(b, 0, byte(r))
			} else {
				b = append(b, byte(r), 0)
			}
		}
		return b
	}
	cases := map[string][]byte{
		"": []byte(text),
		"utf-16 text (little-endian, with a byte-order mark)":    append([]byte{0xFF, 0xFE}, u16(false)...),
		"utf-16 text (big-endian, with a byte-order mark)":       append([]byte{0xFE, 0xFF}, u16(true)...),
		"utf-16 text (little-endian, without a byte-order mark)": u16(false),
		"utf-16 text (big-endian, without a byte-order mark)":    u16(true),
		"utf-32 text (little-endian, with a byte-order mark)":    {0xFF, 0xFE, 0, 0, 'a', 0, 0, 0},
		"utf-32 text (big-endian, without a byte-order mark)":    {0, 0, 0, 'a', 0, 0, 0, 'b', 0, 0, 0, 'c'},
	}
	for want, in := range cases {
		if got := plan.TextEncoding(in); got != want {
			t.Errorf("TextEncoding(% x...) = %q, want %q", in[:min(8, len(in))], got, want)
		}
	}
	// A short text with a NUL is binary, not UTF-16.
	if got := plan.TextEncoding([]byte("a\x00b\n\n\n\n\n")); got != "" {
		t.Errorf("binary: %q", got)
	}
	if r, name := plan.Bidi("ab\u202ec"); r != '\u202e' || name != "right-to-left override" {
		t.Errorf("Bidi: %U %q", r, name)
	}
	if r, _ := plan.Bidi("plain \u200e text"); r != 0 {
		t.Errorf("a left-to-right mark is not an override: %U", r)
	}
}
