package main

import (
	"crypto/rand"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"github.com/urfave/cli/v2"

	"sluice/internal/boundedio"
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
			fmt.Fprintf(c.App.Writer, "wrote %s (private, keep it secret) and %s (public, key id %s)\n", key, pub, record.KeyID(pk))
			fmt.Fprintf(c.App.Writer, "list %s under a role in the policy so its signatures count\n", pub)
			return nil
		},
	}
}

func signCommand() *cli.Command {
	return &cli.Command{
		Name:  "sign",
		Usage: "sign a decision record for a role (appends to DIR/decision.signatures.json)",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "record", Usage: "the decision record, e.g. DIR/decision.json"},
			&cli.StringFlag{Name: "key", Usage: "your private key file (from sluice keygen)"},
			&cli.StringFlag{Name: "role", Usage: "the role you sign for, as the policy names it"},
			&cli.StringSliceFlag{Name: "waive", Usage: "name of a failed check this sign-off waives (repeatable)"},
			&cli.StringFlag{Name: "reason", Usage: "why the waived checks may be overridden (required with --waive)"},
		},
		Action: func(c *cli.Context) error {
			path, keyPath, role := c.String("record"), c.String("key"), c.String("role")
			if path == "" || keyPath == "" || role == "" {
				return withHint(errors.New("sign needs --record, --key and --role"),
					"sluice sign --record DIR/decision.json --key alice.key --role finance")
			}
			var waivers []record.Waiver
			for _, w := range c.StringSlice("waive") {
				if c.String("reason") == "" {
					return withHint(errors.New("a waiver needs a reason"), "add --reason \"why this check may be overridden\"")
				}
				waivers = append(waivers, record.Waiver{Check: w, Reason: c.String("reason")})
			}
			body, err := boundedio.ReadFile(path, boundedio.MaxInput)
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
			s, err := record.Sign(body, key, role, waivers)
			if err != nil {
				return err
			}
			if err := record.AppendSignoff(path, s); err != nil {
				return err
			}
			fmt.Fprintf(c.App.Writer, "signed %s as %s (key %s); signatures in %s\n", path, role, s.KeyID, record.SignaturesPath(path))
			return nil
		},
	}
}
