package main

import (
	"errors"
	"fmt"
	"os"

	"github.com/urfave/cli/v2"

	"sluice/internal/boundedio"
	"sluice/policies"
	"sluice/record"
)

// errNotVerified is the exit status of a record that does not verify.
var errNotVerified = cli.Exit("", 3)

func verifyCommand() *cli.Command {
	return &cli.Command{
		Name:  "verify",
		Usage: "check that a decision record is intact, signed by every required role with keys the policy lists",
		Flags: []cli.Flag{
			&cli.StringFlag{Name: "record", Usage: "the decision record, e.g. DIR/decision.json"},
			&cli.StringFlag{Name: "policy", Usage: "the policy the decision was made under (preset name or YAML file)"},
			&cli.StringFlag{Name: "data", Usage: "also check that this is the data the decision was made from"},
		},
		Action: func(c *cli.Context) error {
			path, polArg := c.String("record"), c.String("policy")
			if path == "" || polArg == "" {
				return withHint(errors.New("verify needs --record and --policy"), "sluice verify --record DIR/decision.json --policy policy.yaml")
			}
			body, err := boundedio.ReadFile(path, boundedio.MaxInput)
			if err != nil {
				return err
			}
			pol, err := policies.Resolve(polArg)
			if err != nil {
				return err
			}
			var sigs []record.Signoff
			if sp := record.SignaturesPath(path); fileExists(sp) {
				if sigs, err = record.ReadSignoffs(sp); err != nil {
					return err
				}
			}
			var dataHash string
			if dp := c.String("data"); dp != "" {
				if dataHash, err = sha256File(dp); err != nil {
					return err
				}
			}
			problems := record.VerifyDecision(body, path, sigs, pol, dataHash)
			if len(problems) > 0 {
				fmt.Fprintf(c.App.ErrWriter, "%s does not verify:\n", path)
				for _, p := range problems {
					fmt.Fprintf(c.App.ErrWriter, "  %s\n", p)
				}
				return errNotVerified
			}
			d, _ := record.ParseDecision(body, path)
			fmt.Fprintf(c.App.Writer, "%s verified: verdict %s, %d sign-offs valid, every required role signed, policy and inputs unchanged\n",
				path, d.Verdict, len(sigs))
			return nil
		},
	}
}

func fileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}
