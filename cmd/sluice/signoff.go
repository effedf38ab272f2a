package main

import (
	"crypto/ed25519"
	"crypto/rand"
	"crypto/x509"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/urfave/cli/v2"

	"sluice/internal/atomicfile"
	"sluice/policies"
	"sluice/record"
)

func keygenCommand() *cli.Command {
	return &cli.Command{
		Name:  "keygen",
		Usage: "create an ed25519 signing key: PREFIX.key (PKCS#8 PEM, mode 0600) and PREFIX.pub (PKIX PEM)",
		Flags: []cli.Flag{&cli.StringFlag{Name: "out", Usage: "path prefix of the key files, e.g. keys/alice"}},
		Action: func(c *cli.Context) error {
			prefix := c.String("out")
			if prefix == "" {
				return withHint(errors.New("keygen needs --out"), "sluice keygen --out keys/alice")
			}
			if err := os.MkdirAll(filepath.Dir(prefix), 0o755); err != nil {
				return err
			}
			key, pub, err := record.GenerateKeyFiles(prefix, rand.Reader)
			if err != nil {
				if errors.Is(err, os.ErrExist) {
					return withHint(err, "key files are never overwritten; choose another --out or remove the old files yourself")
				}
				return err
			}
			pk, err := record.LoadPublicKey(pub)
			if err != nil {
				return err
			}
			der, err := x509.MarshalPKIXPublicKey(pk)
			if err != nil {
				return err
			}
			fmt.Fprintf(c.App.Writer, "wrote %s (private, keep it secret) and %s (public, key id %s)\n", key, pub, record.KeyID(pk))
			fmt.Fprintf(c.App.Writer, "pin it under a role in the policy so its signatures count, as its PEM text or as (path relative to the policy file):\n  - %s %s\n", pub, policies.Fingerprint(der))
			return nil
		},
	}
}

func signCommand() *cli.Command {
	return &cli.Command{
		Name:  "sign",
		Usage: "sign a decision record for a role the policy lists your key for (appends to DIR/decision.signatures.json); --withdraw takes your sign-off back",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "record", Usage: "the decision record, e.g. DIR/decision.json"},
			&cli.StringFlag{Name: "key", Usage: "your private key file (from sluice keygen)"},
			&cli.StringFlag{Name: "role", Usage: "the role you sign for, as the policy names it"},
			&cli.StringFlag{Name: "policy", Usage: "the policy the record was made under (default: the policy file the record names)"},
			&cli.StringSliceFlag{Name: "waive", Usage: "name of a failed check this sign-off waives (repeatable)"},
			&cli.StringFlag{Name: "reason", Usage: "why the waived checks may be overridden (required with --waive)"},
			&cli.BoolFlag{Name: "withdraw", Usage: "withdraw your own sign-off in --role: removed from the signatures file, the signed withdrawal kept there"},
		},
		Action: func(c *cli.Context) error {
			path, keyPath, role := c.String("record"), c.String("key"), c.String("role")
			if path == "" || keyPath == "" || role == "" {
				return withHint(errors.New("sign needs --record, --key and --role"),
					"sluice sign --record DIR/decision.json --key alice.key --role finance_partner")
			}
			var waivers []record.Waiver
			for _, w := range c.StringSlice("waive") {
				if c.Bool("withdraw") {
					return errors.New("--waive and --withdraw do not go together")
				}
				if c.String("reason") == "" {
					return withHint(errors.New("a waiver needs a reason"), "add --reason \"why this check may be overridden\"")
				}
				waivers = append(waivers, record.Waiver{Check: w, Reason: c.String("reason")})
			}
			body, err := os.ReadFile(path)
			if err != nil {
				return err
			}
			rec, err := record.ParseDecision(body, path)
			if err != nil {
				return withHint(err, "only a decision record written by sluice propose can be signed")
			}
			if !c.Bool("withdraw") {
				// Only a record of a complete output set: not one left by an
				// interrupted run, nor one whose brief was changed.
				if err := atomicfile.CheckSet(filepath.Dir(path), filepath.Base(path)); err != nil {
					return withHint(err, "sign the record in the directory sluice propose wrote it to")
				}
			}
			pol, err := recordPolicy(rec, c.String("policy"))
			if err != nil {
				return err
			}
			key, warnings, err := record.LoadPrivateKey(keyPath)
			if err != nil {
				return err
			}
			for _, w := range warnings {
				fmt.Fprintf(c.App.ErrWriter, "warning: %s\n", w)
			}
			pub := key.Public().(ed25519.PublicKey)
			if !c.Bool("withdraw") {
				// A withdrawal needs no listing: only the key that made a
				// sign-off can withdraw it, whatever the policy says.
				if err := maySign(pol, role, pub); err != nil {
					return err
				}
			}
			unlock, err := atomicfile.LockDir(filepath.Dir(path))
			if err != nil {
				return withHint(err, "a decision is being written there; sign when it is done")
			}
			defer unlock()
			now := time.Now()
			if c.Bool("withdraw") {
				w, err := record.Withdraw(body, key, role, now)
				if err != nil {
					return err
				}
				if err := record.WithdrawSignoff(path, w, pub); err != nil {
					return err
				}
				fmt.Fprintf(c.App.Writer, "withdrew your sign-off of %s as %s (key %s) at %s; the withdrawal is recorded in %s\n",
					path, role, w.KeyID, w.SignedAt.Format(time.RFC3339), record.SignaturesPath(path))
				return nil
			}
			s, err := record.SignAt(body, key, role, waivers, now)
			if err != nil {
				return err
			}
			if err := record.AppendSignoff(path, s); err != nil {
				return err
			}
			fmt.Fprintf(c.App.Writer, "signed %s as %s (key %s) at %s; signatures in %s\n", path, role, s.KeyID,
				s.SignedAt.Format(time.RFC3339), record.SignaturesPath(path))
			return nil
		},
	}
}

// recordPolicy resolves the policy a record was made under: arg, or the
// policy file the record names; it must hash as the record says.
func recordPolicy(rec *record.Decision, arg string) (*policies.Policy, error) {
	if arg == "" {
		arg = rec.Inputs["policy"].Path
		if name, ok := strings.CutPrefix(arg, "preset:"); ok {
			arg = name
		}
	}
	if arg == "" {
		return nil, withHint(errors.New("the record names no policy file"), "pass --policy policy.yaml")
	}
	pol, err := policies.Resolve(arg)
	if err != nil {
		return nil, withHint(err, "pass --policy with the policy the record was made under")
	}
	if h := record.SHA256Hex(pol.Raw); h != rec.PolicySHA256 {
		return nil, withHint(fmt.Errorf("policy %s (sha256 %s) is not the policy the record was made under (%s)", pol.Source, h[:12], rec.PolicySHA256[:min(12, len(rec.PolicySHA256))]),
			"pass --policy with the policy the record was made under")
	}
	return pol, nil
}

// maySign refuses a role the policy lacks and a key the policy does not
// list for the role, before anything is written: such a signature could
// never count.
func maySign(pol *policies.Policy, role string, pub ed25519.PublicKey) error {
	if _, ok := pol.Roles[role]; !ok {
		var roles []string
		for r := range pol.Roles {
			roles = append(roles, r)
		}
		slices.Sort(roles)
		return withHint(fmt.Errorf("policy %s has no role %q", pol.Name, role), "roles of the policy: %s", strings.Join(roles, ", "))
	}
	ring, err := record.PolicyKeyring(pol)
	if err != nil {
		return err
	}
	if hasKey(ring[role], pub) {
		return nil
	}
	var others []string
	for r, keys := range ring {
		if hasKey(keys, pub) {
			others = append(others, r)
		}
	}
	slices.Sort(others)
	err = fmt.Errorf("policy %s does not list key %s for role %q", pol.Name, record.KeyID(pub), role)
	if len(others) > 0 {
		return withHint(err, "the policy lists this key for %s; sign in that role", strings.Join(others, ", "))
	}
	return withHint(err, "ask the policy's owner to pin your public key under roles.%s.keys (sluice keygen printed its fingerprint)", role)
}

func hasKey(keys []ed25519.PublicKey, pub ed25519.PublicKey) bool {
	for _, k := range keys {
		if k.Equal(pub) {
			return true
		}
	}
	return false
}
