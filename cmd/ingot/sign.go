package main

import (
	"crypto/ed25519"
	"crypto/rand"
	"fmt"
	"io"
	"os"

	"github.com/spf13/cobra"

	"ingot/format"
	"ingot/format/files"
	"ingot/format/keys"
)

func newKeygenCmd() *cobra.Command {
	var (
		name   string
		asJSON bool
	)
	cmd := &cobra.Command{
		Use:   "keygen [--json] -o NAME",
		Short: "Make an Ed25519 key pair for signing models",
		Long: `Make an Ed25519 key pair: NAME.key (the private key, PKCS #8 in PEM, readable
by you alone) signs models with 'ingot sign'; NAME.pub (the public key, PKIX in
PEM) checks them with 'ingot verify --public-key'. Keep NAME.key out of the
artifacts you ship. An existing key is never overwritten.`,
		Example: `  ingot keygen -o release
  ingot sign --key release.key field.ingot
  ingot verify --public-key release.pub field.ingot`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			for _, p := range []string{name + ".key", name + ".pub"} {
				if _, err := os.Lstat(p); err == nil {
					return fmt.Errorf("keygen: %s exists; not overwriting a key", p)
				}
				if err := files.CheckOutput(p); err != nil {
					return fmt.Errorf("keygen: %w", err)
				}
			}
			pair, err := keys.Generate(rand.Reader)
			if err != nil {
				return fmt.Errorf("keygen: %w", err)
			}
			// Both files are created exclusively: of several keygens racing
			// for one NAME, one wins both files and the others fail and
			// leave nothing of theirs, so NAME.key and NAME.pub always match.
			ctx := cmd.Context()
			if err := writeOutputMode(ctx, name+".key", 0o600, true, nil, func(w io.Writer) error {
				_, err := w.Write(pair.Private)
				return err
			}); err != nil {
				return fmt.Errorf("keygen: %w", err)
			}
			if err := writeOutputMode(ctx, name+".pub", 0o666, true, nil, func(w io.Writer) error {
				_, err := w.Write(pair.Public)
				return err
			}); err != nil {
				os.Remove(name + ".key")
				return fmt.Errorf("keygen: %w (%s.key removed)", err, name)
			}
			if asJSON {
				return writeJSON(cmd.OutOrStdout(), keys.KeygenReport{PrivateKey: name + ".key", PublicKey: name + ".pub", KeyID: keys.ID(pair.ID)})
			}
			fmt.Fprintf(cmd.OutOrStdout(), "wrote %s.key (private) and %s.pub (public), key id %x\n", name, name, pair.ID[:8])
			return nil
		},
	}
	cmd.Flags().StringVarP(&name, "output", "o", "", "write NAME.key and NAME.pub (required)")
	cmd.Flags().BoolVar(&asJSON, "json", false, "report the files written and the key id as JSON")
	cmd.MarkFlagRequired("output")
	return cmd
}

func newSignCmd() *cobra.Command {
	var (
		keyPath string
		asJSON  bool
	)
	cmd := &cobra.Command{
		Use:   "sign [--json] --key NAME.key MODEL",
		Short: "Sign a model's content digest with an Ed25519 key",
		Long: `Add an Ed25519 signature over the model's SHA-256 content digest, in a section
the digest leaves out, so the content is unchanged. The model's checksums and
digest are checked first: a damaged model is never signed. A model signed
before is re-signed. The file is replaced atomically.`,
		Example: `  ingot sign --key release.key field.ingot`,
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			priv, err := keys.ReadPrivate(keyPath)
			if err != nil {
				return fmt.Errorf("sign: --key: %w", err)
			}
			data, err := files.ReadRegular(args[0])
			if err != nil {
				return fmt.Errorf("sign: %w", err)
			}
			signed, err := format.Sign(data, priv)
			if err != nil {
				return fmt.Errorf("sign: %s: %w", args[0], err)
			}
			if err := writeOutput(cmd.Context(), args[0], nil, func(w io.Writer) error {
				_, err := w.Write(signed)
				return err
			}); err != nil {
				return err
			}
			id := format.KeyID(priv.Public().(ed25519.PublicKey))
			if asJSON {
				return writeJSON(cmd.OutOrStdout(), keys.SignReport{Model: args[0], KeyID: keys.ID(id)})
			}
			fmt.Fprintf(cmd.OutOrStdout(), "signed %s with key id %x\n", args[0], id[:8])
			return nil
		},
	}
	cmd.Flags().StringVar(&keyPath, "key", "", "private key file from 'ingot keygen' (required)")
	cmd.Flags().BoolVar(&asJSON, "json", false, "report the model signed and the key id as JSON")
	cmd.MarkFlagRequired("key")
	return cmd
}
