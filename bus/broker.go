package bus

import (
	"context"
	"fmt"
	"log/slog"
	"net"
	"strings"

	mochi "github.com/mochi-mqtt/server/v2"
	"github.com/mochi-mqtt/server/v2/hooks/auth"
	"github.com/mochi-mqtt/server/v2/listeners"
)

// Broker is an MQTT broker embedded in the process (mochi-mqtt), for demos,
// tests and a single machine without a broker of its own. It accepts
// anonymous clients, so it only listens on the loopback interface.
type Broker struct {
	srv  *mochi.Server
	addr string
}

// StartBroker starts a broker listening on addr (host:port; port 0 picks a
// free one). The host must be a loopback address: the embedded broker has
// no authentication.
func StartBroker(addr string, log *slog.Logger) (*Broker, error) {
	host, _, err := net.SplitHostPort(addr)
	if err != nil {
		return nil, fmt.Errorf("embedded broker: %q: want host:port, e.g. 127.0.0.1:1883", addr)
	}
	if host == "" || !isLoopbackHost(host) {
		return nil, fmt.Errorf("embedded broker: %q: it accepts anyone without a password, so it listens on the loopback interface only (e.g. 127.0.0.1:1883)", addr)
	}
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	srv := mochi.New(&mochi.Options{
		// The broker's own chatter (every client connecting) goes at debug
		// level; its warnings and errors stay visible.
		Logger:                 slog.New(quieter{log.Handler()}).With("component", "embedded-broker"),
		InlineClient:           false,
		SysTopicResendInterval: 3600,
	})
	if err := srv.AddHook(new(auth.AllowHook), nil); err != nil {
		return nil, fmt.Errorf("embedded broker: %w", err)
	}
	tcp := listeners.NewTCP(listeners.Config{ID: "tcp", Address: addr})
	if err := srv.AddListener(tcp); err != nil {
		return nil, fmt.Errorf("embedded broker: listen on %s: %w", addr, err)
	}
	if err := srv.Serve(); err != nil {
		srv.Close()
		return nil, fmt.Errorf("embedded broker: %w", err)
	}
	return &Broker{srv: srv, addr: tcp.Address()}, nil
}

// Addr is the address the broker listens on (host:port).
func (b *Broker) Addr() string { return b.addr }

// URL is the broker's address as a client URL, tcp://host:port.
func (b *Broker) URL() string { return "tcp://" + b.addr }

// Close stops the broker and disconnects its clients.
func (b *Broker) Close() error { return b.srv.Close() }

func isLoopbackHost(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// quieter lowers the broker's info messages to debug.
type quieter struct{ slog.Handler }

func (q quieter) Handle(ctx context.Context, r slog.Record) error {
	// mochi advises a keep-alive above 5 s for every client; the service
	// uses 5 s on purpose (a dead connection is noticed sooner).
	if r.Level == slog.LevelInfo || strings.HasPrefix(r.Message, "client keepalive is below minimum") {
		r.Level = slog.LevelDebug
	}
	// Connections cut by the broker's own shutdown are not worth a warning.
	r.Attrs(func(a slog.Attr) bool {
		if strings.Contains(a.Value.String(), "use of closed network connection") {
			r.Level = slog.LevelDebug
			return false
		}
		return true
	})
	if !q.Handler.Enabled(ctx, r.Level) {
		return nil
	}
	return q.Handler.Handle(ctx, r)
}

func (q quieter) Enabled(ctx context.Context, l slog.Level) bool {
	if l == slog.LevelInfo {
		l = slog.LevelDebug
	}
	return q.Handler.Enabled(ctx, l)
}

func (q quieter) WithAttrs(as []slog.Attr) slog.Handler { return quieter{q.Handler.WithAttrs(as)} }
func (q quieter) WithGroup(n string) slog.Handler       { return quieter{q.Handler.WithGroup(n)} }
