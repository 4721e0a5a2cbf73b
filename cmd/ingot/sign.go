package main

import (
	"crypto/ed25519"
	"crypto/rand"
	"crypto/x509"
	"encoding/pem"
	"fmt"
	"io"
	"os"

	"github.com/spf13/cobra"

	"ingot/format"
	"ingot/format/files"
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
			pub, priv, err := ed25519.GenerateKey(rand.Reader)
			if err != nil {
				return fmt.Errorf("keygen: %w", err)
			}
			privDER, err := x509.MarshalPKCS8PrivateKey(priv)
			if err != nil {
				return fmt.Errorf("keygen: %w", err)
			}
			pubDER, err := x509.MarshalPKIXPublicKey(pub)
			if err != nil {
				return fmt.Errorf("keygen: %w", err)
			}
			// Both files are created exclusively: of several keygens racing
			// for one NAME, one wins both files and the others fail and
			// leave nothing of theirs, so NAME.key and NAME.pub always match.
			ctx := cmd.Context()
			if err := writeOutputMode(ctx, name+".key", 0o600, true, nil, func(w io.Writer) error {
				return pem.Encode(w, &pem.Block{Type: "PRIVATE KEY", Bytes: privDER})
			}); err != nil {
				return fmt.Errorf("keygen: %w", err)
			}
			if err := writeOutputMode(ctx, name+".pub", 0o666, true, nil, func(w io.Writer) error {
				return pem.Encode(w, &pem.Block{Type: "PUBLIC KEY", Bytes: pubDER})
			}); err != nil {
				os.Remove(name + ".key")
				return fmt.Errorf("keygen: %w (%s.key removed)", err, name)
			}
			id := format.KeyID(pub)
			if asJSON {
				return writeJSON(cmd.OutOrStdout(), struct {
					PrivateKey string `json:"private_key"`
					PublicKey  string `json:"public_key"`
					KeyID      string `json:"key_id"`
				}{name + ".key", name + ".pub", fmt.Sprintf("%x", id)})
			}
			fmt.Fprintf(cmd.OutOrStdout(), "wrote %s.key (private) and %s.pub (public), key id %x\n", name, name, id[:8])
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
			priv, err := readPrivateKey(keyPath)
			if err != nil {
				return err
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
				return writeJSON(cmd.OutOrStdout(), struct {
					Model string `json:"model"`
					KeyID string `json:"key_id"`
				}{args[0], fmt.Sprintf("%x", id)})
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

// maxKeyFile caps what is read of a key file: a PEM Ed25519 key is about
// 120 bytes.
const maxKeyFile = 64 << 10

func readPEM(path, want string) ([]byte, error) {
	b, err := files.ReadCapped(path, maxKeyFile)
	if err != nil {
		return nil, err
	}
	block, _ := pem.Decode(b)
	if block == nil || block.Type != want {
		return nil, fmt.Errorf("%s: not a PEM %s", path, want)
	}
	return block.Bytes, nil
}

func readPrivateKey(path string) (ed25519.PrivateKey, error) {
	der, err := readPEM(path, "PRIVATE KEY")
	if err != nil {
		return nil, fmt.Errorf("--key: %w", err)
	}
	k, err := x509.ParsePKCS8PrivateKey(der)
	if err != nil {
		return nil, fmt.Errorf("--key %s: %w", path, err)
	}
	priv, ok := k.(ed25519.PrivateKey)
	if !ok {
		return nil, fmt.Errorf("--key %s: not an Ed25519 key", path)
	}
	return priv, nil
}

func readPublicKey(path string) (ed25519.PublicKey, error) {
	der, err := readPEM(path, "PUBLIC KEY")
	if err != nil {
		return nil, fmt.Errorf("--public-key: %w", err)
	}
	k, err := x509.ParsePKIXPublicKey(der)
	if err != nil {
		return nil, fmt.Errorf("--public-key %s: %w", path, err)
	}
	pub, ok := k.(ed25519.PublicKey)
	if !ok {
		return nil, fmt.Errorf("--public-key %s: not an Ed25519 key", path)
	}
	return pub, nil
}
