package main

import (
	"fmt"
	"os"

	"furrow/checker"
)

const keygenUsage = `usage: furrow keygen NAME

Makes an ed25519 key pair for signing audit records: NAME.pub (the public
key, to hand to reviewers) and NAME.key (the private key, readable by you
only). The private key starts with a different prefix, so that it cannot be
passed where a public key is expected. Existing files are never overwritten.

Examples:
  furrow keygen analyst
  furrow run --sign analyst.key --out run1 plan.yaml
  furrow verify --key analyst.pub run1

` + exitCodesHelp

var keygenCommand = &command{
	name:    "keygen",
	summary: "make a key pair for signing audit records",
	usage:   keygenUsage,
	run:     runKeygen,
}

func runKeygen(e *env, c *command, args []string) int {
	fs := newFlags(c)
	pos, ok, code := parse(e, c, fs, args, 1, 1)
	if !ok {
		return code
	}
	pubPath, keyPath := pos[0]+".pub", pos[0]+".key"
	for _, p := range []string{pubPath, keyPath} {
		if _, err := os.Lstat(p); err == nil {
			return fail(e, c, fmt.Errorf("%s exists; not overwriting it", e.rel(p)))
		}
	}
	pub, priv, err := checker.GenerateKey(nil)
	if err != nil {
		return fail(e, c, err)
	}
	if err := os.WriteFile(keyPath, []byte(priv), 0o600); err != nil {
		return fail(e, c, err)
	}
	if err := os.WriteFile(pubPath, []byte(pub), 0o644); err != nil {
		return fail(e, c, err)
	}
	fmt.Fprintf(e.stdout, "wrote %s (public) and %s (private)\n", e.rel(pubPath), e.rel(keyPath))
	if k, err := checker.ParsePublicKey(pub); err == nil {
		fmt.Fprintf(e.stdout, "key %s: verify names the signer of a record by this fingerprint\n", checker.Fingerprint(k))
	}
	return exitOK
}
