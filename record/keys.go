package record

import (
	"bytes"
	"crypto/ed25519"
	"crypto/sha256"
	"crypto/x509"
	"encoding/hex"
	"encoding/pem"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"runtime"
)

// KeyIDLen is the length of a key id in hex characters.
const KeyIDLen = 16

// KeyID names a public key: the first 16 hex characters (64 bits) of the
// SHA-256 of its PKIX DER encoding, the bytes inside a "PUBLIC KEY" PEM
// file, so `openssl pkey -pubin -outform DER | sha256sum` shows the same
// prefix. It is a hint for people and for choosing a key, never proof of
// who signed: verification always checks the signature itself. It panics
// if pub is not an ed25519 public key (32 bytes).
func KeyID(pub ed25519.PublicKey) string {
	der := pkixDER(pub)
	sum := sha256.Sum256(der)
	return hex.EncodeToString(sum[:])[:KeyIDLen]
}

func pkixDER(pub ed25519.PublicKey) []byte {
	if len(pub) != ed25519.PublicKeySize {
		panic(fmt.Sprintf("record: ed25519 public key has %d bytes, want %d", len(pub), ed25519.PublicKeySize))
	}
	der, err := x509.MarshalPKIXPublicKey(pub)
	if err != nil {
		panic("record: " + err.Error()) // cannot happen for a 32-byte ed25519 key
	}
	return der
}

const (
	privatePEMType = "PRIVATE KEY"
	publicPEMType  = "PUBLIC KEY"
	maxKeyFileSize = 64 << 10 // a PEM ed25519 key is about 120 bytes
)

// MarshalPrivateKeyPEM encodes key as a PKCS#8 "PRIVATE KEY" PEM block.
func MarshalPrivateKeyPEM(key ed25519.PrivateKey) ([]byte, error) {
	if len(key) != ed25519.PrivateKeySize {
		return nil, fmt.Errorf("record: private key has %d bytes, want %d", len(key), ed25519.PrivateKeySize)
	}
	der, err := x509.MarshalPKCS8PrivateKey(key)
	if err != nil {
		return nil, fmt.Errorf("record: encode private key: %w", err)
	}
	return pem.EncodeToMemory(&pem.Block{Type: privatePEMType, Bytes: der}), nil
}

// MarshalPublicKeyPEM encodes pub as a PKIX "PUBLIC KEY" PEM block.
func MarshalPublicKeyPEM(pub ed25519.PublicKey) ([]byte, error) {
	if len(pub) != ed25519.PublicKeySize {
		return nil, fmt.Errorf("record: public key has %d bytes, want %d", len(pub), ed25519.PublicKeySize)
	}
	return pem.EncodeToMemory(&pem.Block{Type: publicPEMType, Bytes: pkixDER(pub)}), nil
}

// ParsePrivateKeyPEM decodes a PKCS#8 "PRIVATE KEY" PEM block holding an
// ed25519 key. Its errors never repeat any part of data.
func ParsePrivateKeyPEM(data []byte) (ed25519.PrivateKey, error) {
	der, err := pemBlock(data, privatePEMType)
	if err != nil {
		return nil, err
	}
	k, err := x509.ParsePKCS8PrivateKey(der)
	if err != nil {
		// The x509 message is not repeated: say what was expected instead.
		return nil, errors.New("PRIVATE KEY block is not valid PKCS#8")
	}
	key, ok := k.(ed25519.PrivateKey)
	if !ok {
		return nil, fmt.Errorf("PKCS#8 key is %s, want ed25519", keyKind(k))
	}
	return key, nil
}

// ParsePublicKeyPEM decodes a PKIX "PUBLIC KEY" PEM block holding an
// ed25519 key.
func ParsePublicKeyPEM(data []byte) (ed25519.PublicKey, error) {
	der, err := pemBlock(data, publicPEMType)
	if err != nil {
		return nil, err
	}
	k, err := x509.ParsePKIXPublicKey(der)
	if err != nil {
		return nil, errors.New("PUBLIC KEY block is not valid PKIX (SubjectPublicKeyInfo)")
	}
	pub, ok := k.(ed25519.PublicKey)
	if !ok {
		return nil, fmt.Errorf("PKIX key is %s, want ed25519", keyKind(k))
	}
	return pub, nil
}

// pemBlock returns the DER of the single PEM block of type want in data.
// Only whitespace may surround it; encrypted (header-carrying) blocks are
// refused because their contents are not PKCS#8 as such.
func pemBlock(data []byte, want string) ([]byte, error) {
	block, rest := pem.Decode(data)
	if block == nil {
		return nil, fmt.Errorf("no PEM block found, want %q", want)
	}
	if block.Type != want {
		return nil, fmt.Errorf("PEM block is %s, want %q", describeType(block.Type), want)
	}
	if len(block.Headers) > 0 {
		return nil, fmt.Errorf("%s block has PEM headers; encrypted or annotated keys are not supported", want)
	}
	if len(bytes.TrimSpace(rest)) > 0 {
		return nil, fmt.Errorf("unexpected data after the %s block", want)
	}
	return block.Bytes, nil
}

// describeType quotes a PEM type line for a message. Type lines are labels,
// not key material, but a long one is cut short.
func describeType(t string) string {
	if len(t) > 40 {
		t = t[:40] + "..."
	}
	return fmt.Sprintf("%q", t)
}

func keyKind(k any) string {
	switch k.(type) {
	case ed25519.PrivateKey, ed25519.PublicKey:
		return "ed25519"
	default:
		return fmt.Sprintf("%T", k)
	}
}

// GenerateKeyFiles makes a new ed25519 key pair from rand (nil means
// crypto/rand) and writes the private key to prefix+".key" (PKCS#8 PEM,
// mode 0600) and the public key to prefix+".pub" (PKIX PEM, mode 0644
// before umask). Both are created with O_EXCL: an existing file is never
// overwritten, and nothing is written if either exists.
func GenerateKeyFiles(prefix string, rand io.Reader) (keyPath, pubPath string, err error) {
	keyPath, pubPath = prefix+".key", prefix+".pub"
	for _, p := range []string{keyPath, pubPath} {
		if _, err := os.Lstat(p); err == nil {
			return "", "", fmt.Errorf("record: refusing to overwrite %s: %w (choose another name or remove it first)", p, fs.ErrExist)
		}
	}
	pub, key, err := ed25519.GenerateKey(rand)
	if err != nil {
		return "", "", fmt.Errorf("record: generate key: %w", err)
	}
	keyPEM, err := MarshalPrivateKeyPEM(key)
	if err != nil {
		return "", "", err
	}
	pubPEM, err := MarshalPublicKeyPEM(pub)
	if err != nil {
		return "", "", err
	}
	if err := createExclusive(keyPath, keyPEM, 0o600); err != nil {
		return "", "", err
	}
	if err := createExclusive(pubPath, pubPEM, 0o644); err != nil {
		os.Remove(keyPath) // we created it just now; a key without its .pub is no use
		return "", "", err
	}
	return keyPath, pubPath, nil
}

// createExclusive writes a new file, failing if path exists. Key files use
// O_EXCL instead of an atomic rename: a rename would replace an existing
// key, which is exactly what must never happen.
func createExclusive(path string, data []byte, perm os.FileMode) (err error) {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, perm)
	if err != nil {
		if errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("record: refusing to overwrite %s: %w (choose another name or remove it first)", path, fs.ErrExist)
		}
		return fmt.Errorf("record: %w", err)
	}
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(path)
		}
	}()
	if perm&0o077 == 0 {
		// umask can only remove bits; Chmod makes sure the owner can read.
		if err = f.Chmod(perm); err != nil {
			return fmt.Errorf("record: %w", err)
		}
	}
	if _, err = f.Write(data); err != nil {
		return fmt.Errorf("record: write %s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("record: write %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("record: write %s: %w", path, err)
	}
	return nil
}

// LoadPrivateKey reads an ed25519 private key from a PKCS#8 PEM file. If
// the file's mode gives group or others any access, it still loads the key
// and returns a warning saying the mode and how to fix it. Errors name the
// file and never repeat its contents.
func LoadPrivateKey(path string) (key ed25519.PrivateKey, warnings []string, err error) {
	data, mode, err := readKeyFile(path)
	if err != nil {
		return nil, nil, err
	}
	if runtime.GOOS != "windows" && mode.Perm()&0o077 != 0 {
		warnings = append(warnings, fmt.Sprintf(
			"%s: private key file has mode %04o, which lets other users read or change it; run: chmod 600 %s",
			path, mode.Perm(), path))
	}
	key, err = ParsePrivateKeyPEM(data)
	if err != nil {
		return nil, nil, fmt.Errorf("%s: %w", path, err)
	}
	return key, warnings, nil
}

// LoadPublicKey reads an ed25519 public key from a PKIX PEM file.
func LoadPublicKey(path string) (ed25519.PublicKey, error) {
	data, _, err := readKeyFile(path)
	if err != nil {
		return nil, err
	}
	pub, err := ParsePublicKeyPEM(data)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return pub, nil
}

func readKeyFile(path string) ([]byte, fs.FileMode, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, fmt.Errorf("record: %w", err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, 0, fmt.Errorf("record: %w", err)
	}
	if !st.Mode().IsRegular() {
		return nil, 0, fmt.Errorf("%s: not a regular file", path)
	}
	data, err := io.ReadAll(io.LimitReader(f, maxKeyFileSize+1))
	if err != nil {
		return nil, 0, fmt.Errorf("record: read %s: %w", path, err)
	}
	if len(data) > maxKeyFileSize {
		return nil, 0, fmt.Errorf("%s: larger than %d bytes, not a key file", path, maxKeyFileSize)
	}
	return data, st.Mode(), nil
}
