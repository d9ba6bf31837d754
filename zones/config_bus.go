package zones

import (
	"net"
	"net/url"
	"strconv"
	"strings"
	"time"
)

// BusConfig is the MQTT side of the live service (`forereach run`). Owned
// by the live-service work; fields may be added here.
type BusConfig struct {
	// Broker is the MQTT broker: tcp://host:port (or mqtt://) for plaintext,
	// ssl://host:port (or tls://, mqtts://) for TLS. Default
	// tcp://127.0.0.1:1883.
	Broker   string `yaml:"broker"`
	ClientID string `yaml:"client_id"` // default forereach-<cell>
	// Topics is the topic layout; see TopicsConfig.
	Topics TopicsConfig `yaml:"topics"`
	// Username and PasswordFile (relative to the configuration file; its
	// first line is the password) authenticate to the broker.
	Username     string    `yaml:"username"`
	PasswordFile string    `yaml:"password_file"`
	TLS          TLSConfig `yaml:"tls"`
	// AllowPlaintext permits a tcp:// broker that is not on the loopback
	// interface. Without it such a configuration is refused.
	AllowPlaintext bool `yaml:"allow_plaintext"`
	// Tracks, when set, lists the track ids accepted; samples of other
	// tracks are rejected as unknown-track.
	Tracks []string `yaml:"tracks"`
	// MaxTracks bounds the tracks the engine keeps (default 64).
	MaxTracks int `yaml:"max_tracks"`
	// MaxPayload is the largest payload accepted, in bytes (default 65536).
	MaxPayload int `yaml:"max_payload"`
	// QoS of the subscriptions to samples and robot state (0 or 1;
	// default 0). Advisories and status are always published at QoS 1.
	QoS int `yaml:"qos"`
	// Tick is how often the service advances the engine's clock between
	// samples, so that silent tracks are declared lost and advisories
	// released (default 50ms).
	Tick Duration `yaml:"tick"`
	// KeepAlive is the MQTT keep-alive (default 5s): a dead connection is
	// noticed after about 1.5 times this.
	KeepAlive Duration `yaml:"keepalive"`
	// ReconnectMax caps the back-off between reconnection attempts
	// (default 2s).
	ReconnectMax Duration        `yaml:"reconnect_max"`
	Recording    RecordingConfig `yaml:"recording"`
	// Metrics is the listen address of /metrics and /healthz, e.g.
	// 127.0.0.1:9464; empty: off.
	Metrics string `yaml:"metrics"`
}

// TopicsConfig is the topic layout. In every topic, {cell} expands to the
// cell name and {prefix} to Prefix.
type TopicsConfig struct {
	Prefix string `yaml:"prefix"` // default "forereach/{cell}"
	// Samples is the subscription filter for hand samples (default
	// "{prefix}/hands/#": sources may publish on {prefix}/hands or on a
	// subtopic per device).
	Samples string `yaml:"samples"`
	// Robot is the subscription filter for robot states (default
	// "{prefix}/robot").
	Robot string `yaml:"robot"`
	// Advisory receives each advisory change at QoS 1 (default
	// "{prefix}/advisory/event").
	Advisory string `yaml:"advisory"`
	// State holds the current advisory, retained (default
	// "{prefix}/advisory/state").
	State string `yaml:"state"`
	// Status holds the service status, retained; the broker sets it offline
	// through the last will (default "{prefix}/status").
	Status string `yaml:"status"`
}

// TLSConfig points at PEM files (relative to the configuration file).
type TLSConfig struct {
	CA   string `yaml:"ca"`   // CA certificates for the broker; empty: the system's
	Cert string `yaml:"cert"` // client certificate
	Key  string `yaml:"key"`  // its private key
	// ServerName overrides the name checked in the broker's certificate.
	ServerName string `yaml:"server_name"`
}

// RecordingConfig controls the JSONL recording of the live service.
type RecordingConfig struct {
	// Dir is where recordings go (relative to the working directory);
	// empty: no recording.
	Dir string `yaml:"dir"`
	// MaxBytes starts a new file when the current one reaches this size
	// (default 100 MB; 0 after defaults is impossible, use a large value).
	MaxBytes int64 `yaml:"max_bytes"`
}

// Defaults of the bus section.
const (
	DefaultBroker       = "tcp://127.0.0.1:1883"
	DefaultTopicPrefix  = "forereach/{cell}"
	DefaultMaxTracks    = 64
	DefaultMaxPayload   = 65536
	DefaultRecordingMax = 100 << 20
)

// Defaults fills in the bus section.
func (b *BusConfig) Defaults() {
	if b.Broker == "" {
		b.Broker = DefaultBroker
	}
	t := &b.Topics
	if t.Prefix == "" {
		t.Prefix = DefaultTopicPrefix
	}
	if t.Samples == "" {
		t.Samples = "{prefix}/hands/#"
	}
	if t.Robot == "" {
		t.Robot = "{prefix}/robot"
	}
	if t.Advisory == "" {
		t.Advisory = "{prefix}/advisory/event"
	}
	if t.State == "" {
		t.State = "{prefix}/advisory/state"
	}
	if t.Status == "" {
		t.Status = "{prefix}/status"
	}
	if b.MaxTracks == 0 {
		b.MaxTracks = DefaultMaxTracks
	}
	if b.MaxPayload == 0 {
		b.MaxPayload = DefaultMaxPayload
	}
	if b.Tick == 0 {
		b.Tick = Duration(50 * time.Millisecond)
	}
	if b.KeepAlive == 0 {
		b.KeepAlive = Duration(5 * time.Second)
	}
	if b.ReconnectMax == 0 {
		b.ReconnectMax = Duration(2 * time.Second)
	}
	if b.Recording.MaxBytes == 0 {
		b.Recording.MaxBytes = DefaultRecordingMax
	}
}

// Topic expands {cell} and {prefix} in a topic of the layout.
func (t *TopicsConfig) Topic(cell, topic string) string {
	prefix := strings.ReplaceAll(t.Prefix, "{cell}", cell)
	topic = strings.ReplaceAll(topic, "{prefix}", prefix)
	return strings.ReplaceAll(topic, "{cell}", cell)
}

// BrokerURL parses Broker and reports whether it uses TLS.
func (b *BusConfig) BrokerURL() (u *url.URL, tls bool, err error) {
	u, err = url.Parse(b.Broker)
	if err != nil {
		return nil, false, err
	}
	switch u.Scheme {
	case "tcp", "mqtt":
	case "ssl", "tls", "mqtts":
		tls = true
	default:
		return nil, false, errBroker("scheme " + strconv.Quote(u.Scheme) + ": want tcp://, mqtt://, ssl://, tls:// or mqtts://")
	}
	if u.Hostname() == "" || u.Port() == "" {
		return nil, false, errBroker("want scheme://host:port")
	}
	if p, err := strconv.Atoi(u.Port()); err != nil || p < 1 || p > 65535 {
		return nil, false, errBroker("port " + strconv.Quote(u.Port()) + " is not in 1..65535")
	}
	if u.Path != "" && u.Path != "/" {
		return nil, false, errBroker("unexpected path " + strconv.Quote(u.Path))
	}
	return u, tls, nil
}

type errBroker string

func (e errBroker) Error() string { return string(e) }

// IsLoopback reports whether host names the loopback interface.
func IsLoopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// Check checks the bus section.
func (b *BusConfig) Check(c *Checker) {
	u, tls, err := b.BrokerURL()
	if err != nil {
		c.Errorf("broker", "%q: %v", b.Broker, err)
	} else if !tls && !b.AllowPlaintext && !IsLoopback(u.Hostname()) {
		c.Errorf("broker", "%q: plaintext MQTT to a broker that is not on this machine: use ssl://, or set allow_plaintext: true if the network is trusted", b.Broker)
	}
	if !tls && (b.TLS.CA != "" || b.TLS.Cert != "" || b.TLS.Key != "") {
		c.Errorf("tls", "TLS files are given but the broker %q is not ssl://", b.Broker)
	}
	if (b.TLS.Cert == "") != (b.TLS.Key == "") {
		c.Errorf("tls", "cert and key go together")
	}
	if b.PasswordFile != "" && b.Username == "" {
		c.Errorf("password_file", "a password without a username")
	}
	if strings.ContainsAny(b.ClientID, "\x00") || len(b.ClientID) > 128 {
		c.Errorf("client_id", "must be at most 128 bytes without NUL")
	}
	cell := ""
	if c.Config != nil {
		cell = c.Config.Cell
	}
	t := &b.Topics
	if strings.ContainsAny(t.Prefix, "+#") {
		c.Errorf("topics.prefix", "%q: wildcards are not allowed in the prefix", t.Prefix)
	}
	seen := map[string]string{}
	for _, f := range []struct {
		name, v string
		filter  bool
	}{
		{"samples", t.Samples, true}, {"robot", t.Robot, true},
		{"advisory", t.Advisory, false}, {"state", t.State, false}, {"status", t.Status, false},
	} {
		topic := t.Topic(cell, f.v)
		if msg := checkTopic(topic, f.filter); msg != "" {
			c.Errorf("topics."+f.name, "%q: %s", topic, msg)
			continue
		}
		if other, dup := seen[topic]; dup {
			c.Errorf("topics."+f.name, "%q is also topics.%s", topic, other)
		}
		seen[topic] = f.name
	}
	for _, out := range []string{"advisory", "state", "status"} {
		for _, in := range []string{"samples", "robot"} {
			var o, i string
			switch out {
			case "advisory":
				o = t.Topic(cell, t.Advisory)
			case "state":
				o = t.Topic(cell, t.State)
			default:
				o = t.Topic(cell, t.Status)
			}
			if in == "samples" {
				i = t.Topic(cell, t.Samples)
			} else {
				i = t.Topic(cell, t.Robot)
			}
			if checkTopic(o, false) == "" && checkTopic(i, true) == "" && TopicMatch(i, o) {
				c.Errorf("topics."+out, "%q matches the subscription topics.%s %q: the service would read its own output", o, in, i)
			}
		}
	}
	seenTrack := map[string]bool{}
	for i, tr := range b.Tracks {
		field := "tracks[" + strconv.Itoa(i) + "]"
		switch {
		case tr == "" || len(tr) > 64 || strings.ContainsFunc(tr, isSpaceOrControl):
			c.Errorf(field, "%q: a track id is 1 to 64 bytes without spaces or control characters", tr)
		case seenTrack[tr]:
			c.Errorf(field, "%q listed twice", tr)
		}
		seenTrack[tr] = true
	}
	if b.MaxTracks < 1 || b.MaxTracks > 10000 {
		c.Errorf("max_tracks", "must be in 1..10000, got %d", b.MaxTracks)
	}
	if b.MaxPayload < 256 || b.MaxPayload > 16<<20 {
		c.Errorf("max_payload", "must be in 256..16777216 bytes, got %d", b.MaxPayload)
	}
	if b.QoS != 0 && b.QoS != 1 {
		c.Errorf("qos", "must be 0 or 1, got %d", b.QoS)
	}
	if d := time.Duration(b.Tick); d < time.Millisecond || d > 5*time.Second {
		c.Errorf("tick", "must be in 1ms..5s, got %v", d)
	}
	if d := time.Duration(b.KeepAlive); d < time.Second || d > time.Hour {
		c.Errorf("keepalive", "must be in 1s..1h, got %v", d)
	}
	if d := time.Duration(b.ReconnectMax); d < 100*time.Millisecond || d > 10*time.Minute {
		c.Errorf("reconnect_max", "must be in 100ms..10m, got %v", d)
	}
	if b.Recording.MaxBytes < 4096 {
		c.Errorf("recording.max_bytes", "must be at least 4096, got %d", b.Recording.MaxBytes)
	}
	if b.Metrics != "" {
		if _, _, err := net.SplitHostPort(b.Metrics); err != nil {
			c.Errorf("metrics", "%q: want host:port, e.g. 127.0.0.1:9464", b.Metrics)
		}
	}
}

// checkTopic checks an MQTT topic name (filter: a subscription filter,
// where + and # may appear as whole levels, # last).
func checkTopic(t string, filter bool) string {
	if t == "" {
		return "empty topic"
	}
	if len(t) > 65535 {
		return "longer than 65535 bytes"
	}
	if strings.ContainsFunc(t, isControl) {
		return "contains control characters"
	}
	if strings.Contains(t, "{") || strings.Contains(t, "}") {
		return "unknown placeholder (only {cell} and {prefix} expand)"
	}
	levels := strings.Split(t, "/")
	for i, l := range levels {
		if strings.ContainsAny(l, "+#") {
			if !filter {
				return "wildcards + and # are only for subscriptions"
			}
			if len(l) != 1 || (l == "#" && i != len(levels)-1) {
				return "a wildcard must be a whole level, and # the last"
			}
		}
	}
	return ""
}

// TopicMatch reports whether topic name matches subscription filter.
func TopicMatch(filter, topic string) bool {
	f := strings.Split(filter, "/")
	n := strings.Split(topic, "/")
	for i, l := range f {
		if l == "#" {
			return true
		}
		if i >= len(n) {
			return false
		}
		if l != "+" && l != n[i] {
			return false
		}
	}
	return len(f) == len(n)
}
