package bus

import (
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"math/big"
	"net"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"forereach/zones"

	mochi "github.com/mochi-mqtt/server/v2"
	"github.com/mochi-mqtt/server/v2/hooks/auth"
	"github.com/mochi-mqtt/server/v2/listeners"
)

// pki is a throw-away certificate authority with a server certificate for
// 127.0.0.1 and a client certificate, written as PEM files.
type pki struct {
	dir                                        string
	caFile, otherCAFile, clientCert, clientKey string
	serverTLS                                  *tls.Config
}

func newPKI(t *testing.T) *pki {
	t.Helper()
	p := &pki{dir: t.TempDir()}
	writePEM := func(name, typ string, der []byte) string {
		path := filepath.Join(p.dir, name)
		if err := os.WriteFile(path, pem.EncodeToMemory(&pem.Block{Type: typ, Bytes: der}), 0o600); err != nil {
			t.Fatal(err)
		}
		return path
	}
	newKey := func() *ecdsa.PrivateKey {
		k, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
		if err != nil {
			t.Fatal(err)
		}
		return k
	}
	serial := int64(1)
	mkCA := func(cn string) (*x509.Certificate, *ecdsa.PrivateKey, []byte) {
		k := newKey()
		serial++
		tmpl := &x509.Certificate{SerialNumber: big.NewInt(serial), Subject: pkix.Name{CommonName: cn},
			NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
			IsCA: true, BasicConstraintsValid: true, KeyUsage: x509.KeyUsageCertSign}
		der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &k.PublicKey, k)
		if err != nil {
			t.Fatal(err)
		}
		c, _ := x509.ParseCertificate(der)
		return c, k, der
	}
	caCert, caKey, caDER := mkCA("pl3 test CA")
	p.caFile = writePEM("ca.pem", "CERTIFICATE", caDER)
	_, _, otherDER := mkCA("another CA")
	p.otherCAFile = writePEM("other-ca.pem", "CERTIFICATE", otherDER)
	caPool := x509.NewCertPool()
	caPool.AddCert(caCert)
	issue := func(cn string, server bool) ([]byte, *ecdsa.PrivateKey) {
		k := newKey()
		serial++
		tmpl := &x509.Certificate{SerialNumber: big.NewInt(serial), Subject: pkix.Name{CommonName: cn},
			NotBefore: time.Now().Add(-time.Hour), NotAfter: time.Now().Add(time.Hour),
			KeyUsage: x509.KeyUsageDigitalSignature}
		if server {
			tmpl.ExtKeyUsage = []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth}
			tmpl.IPAddresses = []net.IP{net.ParseIP("127.0.0.1")}
		} else {
			tmpl.ExtKeyUsage = []x509.ExtKeyUsage{x509.ExtKeyUsageClientAuth}
		}
		der, err := x509.CreateCertificate(rand.Reader, tmpl, caCert, &k.PublicKey, caKey)
		if err != nil {
			t.Fatal(err)
		}
		return der, k
	}
	sDER, sKey := issue("broker", true)
	serverCert := tls.Certificate{Certificate: [][]byte{sDER}, PrivateKey: sKey}
	cDER, cKey := issue("forereach-pl3", false)
	p.clientCert = writePEM("client.pem", "CERTIFICATE", cDER)
	kDER, err := x509.MarshalECPrivateKey(cKey)
	if err != nil {
		t.Fatal(err)
	}
	p.clientKey = writePEM("client.key", "EC PRIVATE KEY", kDER)
	p.serverTLS = &tls.Config{Certificates: []tls.Certificate{serverCert}, ClientCAs: caPool,
		ClientAuth: tls.RequireAndVerifyClientCert, MinVersion: tls.VersionTLS12}
	return p
}

// startTLSBroker starts a mochi broker that requires TLS with a client
// certificate from p's CA and the user forereach/s3cret.
func startTLSBroker(t *testing.T, p *pki) string {
	t.Helper()
	srv := mochi.New(&mochi.Options{Logger: testLogger(t)})
	ledger := &auth.Ledger{Users: auth.Users{"forereach": {Username: "forereach", Password: "s3cret"}}}
	if err := srv.AddHook(new(auth.Hook), &auth.Options{Ledger: ledger}); err != nil {
		t.Fatal(err)
	}
	l := listeners.NewTCP(listeners.Config{ID: "tls", Address: "127.0.0.1:0", TLSConfig: p.serverTLS})
	if err := srv.AddListener(l); err != nil {
		t.Fatal(err)
	}
	if err := srv.Serve(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { srv.Close() })
	return l.Address()
}

// The service reaches a broker that requires TLS, a client certificate and
// a username with password; it stays out with a wrong password or a CA that
// did not sign the broker's certificate.
func TestServiceTLSAndPassword(t *testing.T) {
	p := newPKI(t)
	addr := startTLSBroker(t, p)
	if err := os.WriteFile(filepath.Join(p.dir, "mqtt.pw"), []byte("s3cret\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(p.dir, "wrong.pw"), []byte("guess\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	try := func(wait time.Duration, edit func(b *zones.BusConfig)) bool {
		cfg := loadCell(t, func(c *zones.Config) {
			c.Source = filepath.Join(p.dir, "cell.yaml") // TLS and password files are relative to it
			c.Bus.Broker = "ssl://" + addr
			c.Bus.TLS = zones.TLSConfig{CA: "ca.pem", Cert: "client.pem", Key: "client.key"}
			c.Bus.Username, c.Bus.PasswordFile = "forereach", "mqtt.pw"
			edit(&c.Bus)
		})
		eng, err := NewEngine(cfg)
		if err != nil {
			t.Fatal(err)
		}
		svc, err := NewService(ServiceOptions{Config: cfg, Engine: eng, Version: "test", Logger: testLogger(t)})
		if err != nil {
			t.Fatal(err)
		}
		ctx, cancel := context.WithCancel(context.Background())
		done := make(chan error, 1)
		go func() { done <- svc.Run(ctx) }()
		defer func() { cancel(); <-done }()
		deadline := time.Now().Add(wait)
		for time.Now().Before(deadline) {
			if svc.Connected() {
				return true
			}
			time.Sleep(10 * time.Millisecond)
		}
		return false
	}
	if !try(10*time.Second, func(*zones.BusConfig) {}) {
		t.Error("did not connect with TLS, client certificate and password")
	}
	if try(1500*time.Millisecond, func(b *zones.BusConfig) { b.PasswordFile = "wrong.pw" }) {
		t.Error("connected with a wrong password")
	}
	if try(1500*time.Millisecond, func(b *zones.BusConfig) { b.TLS.CA = "other-ca.pem" }) {
		t.Error("connected although the broker's certificate is not signed by the configured CA")
	}
	if try(1500*time.Millisecond, func(b *zones.BusConfig) { b.TLS.Cert, b.TLS.Key = "", "" }) {
		t.Error("connected without a client certificate")
	}
}

func TestServiceTLSFileErrors(t *testing.T) {
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "notpem.pem"), []byte("hello"), 0o600)
	for _, c := range []struct {
		tls  zones.TLSConfig
		user string
		pw   string
		want string
	}{
		{tls: zones.TLSConfig{CA: "missing.pem"}, want: "bus.tls.ca"},
		{tls: zones.TLSConfig{CA: "notpem.pem"}, want: "no PEM certificate"},
		{tls: zones.TLSConfig{Cert: "missing.pem", Key: "missing.key"}, want: "bus.tls.cert/key"},
		{user: "u", pw: "missing.pw", want: "bus.password_file"},
	} {
		cfg := loadCell(t, func(cf *zones.Config) {
			cf.Source = filepath.Join(dir, "cell.yaml")
			cf.Bus.Broker = "ssl://127.0.0.1:8883"
			cf.Bus.TLS = c.tls
			cf.Bus.Username, cf.Bus.PasswordFile = c.user, c.pw
		})
		eng, _ := NewEngine(cfg)
		_, err := NewService(ServiceOptions{Config: cfg, Engine: eng})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: %v, want an error about %s", c, err, c.want)
		}
	}
}
