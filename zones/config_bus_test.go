package zones

import (
	"errors"
	"strings"
	"testing"
	"time"
)

const busTestCell = `cell: pl3-palletiser
zones:
  - name: pallet-a
    box: {min: [4.8, 0.6, 0.0], max: [6.0, 1.4, 2.0]}
`

func TestBusDefaults(t *testing.T) {
	cfg, err := Parse([]byte(busTestCell), "cell.yaml")
	if err != nil {
		t.Fatal(err)
	}
	b := cfg.Bus
	if b.Broker != "tcp://127.0.0.1:1883" || b.MaxTracks != 64 || b.MaxPayload != 65536 || b.QoS != 0 ||
		time.Duration(b.Tick) != 50*time.Millisecond || time.Duration(b.KeepAlive) != 5*time.Second ||
		time.Duration(b.ReconnectMax) != 2*time.Second || b.Recording.MaxBytes != 100<<20 || b.Recording.Dir != "" {
		t.Errorf("defaults %+v", b)
	}
	tp := &b.Topics
	for _, c := range []struct{ got, want string }{
		{tp.Topic(cfg.Cell, tp.Samples), "forereach/pl3-palletiser/hands/#"},
		{tp.Topic(cfg.Cell, tp.Robot), "forereach/pl3-palletiser/robot"},
		{tp.Topic(cfg.Cell, tp.Advisory), "forereach/pl3-palletiser/advisory/event"},
		{tp.Topic(cfg.Cell, tp.State), "forereach/pl3-palletiser/advisory/state"},
		{tp.Topic(cfg.Cell, tp.Status), "forereach/pl3-palletiser/status"},
	} {
		if c.got != c.want {
			t.Errorf("topic %q, want %q", c.got, c.want)
		}
	}
}

func TestBusTopicLayout(t *testing.T) {
	src := busTestCell + `bus:
  topics:
    prefix: plant/line3/{cell}
    samples: tracking/{cell}/+/hand
    advisory: "{prefix}/adv"
`
	cfg, err := Parse([]byte(src), "cell.yaml")
	if err != nil {
		t.Fatal(err)
	}
	tp := &cfg.Bus.Topics
	if got := tp.Topic(cfg.Cell, tp.Samples); got != "tracking/pl3-palletiser/+/hand" {
		t.Errorf("samples %q", got)
	}
	if got := tp.Topic(cfg.Cell, tp.Advisory); got != "plant/line3/pl3-palletiser/adv" {
		t.Errorf("advisory %q", got)
	}
	if got := tp.Topic(cfg.Cell, tp.Status); got != "plant/line3/pl3-palletiser/status" {
		t.Errorf("status %q", got)
	}
}

func TestBusChecks(t *testing.T) {
	src := busTestCell + `bus:
  broker: tcp://10.1.2.3:1883
  topics:
    advisory: "{prefix}/hands/out"
    state: "{prefix}/#"
    robot: "{prefix}/robot/{station}"
  username: ""
  password_file: pw.txt
  tls:
    cert: client.pem
  tracks: [op1/right, "op 2", op1/right]
  max_tracks: 0
  max_payload: 10
  qos: 2
  tick: 10s
  keepalive: 100ms
  reconnect_max: 1h
  recording:
    max_bytes: 100
  metrics: "9464"
`
	_, err := Parse([]byte(src), "cell.yaml")
	var ce *ConfigErrors
	if !errors.As(err, &ce) {
		t.Fatalf("got %v, want ConfigErrors", err)
	}
	msg := err.Error()
	for _, want := range []string{
		`cell.yaml:6:11: bus.broker: "tcp://10.1.2.3:1883": plaintext MQTT to a broker that is not on this machine`,
		`bus.topics.advisory: "forereach/pl3-palletiser/hands/out" matches the subscription topics.samples`,
		`bus.topics.state: "forereach/pl3-palletiser/#": wildcards + and # are only for subscriptions`,
		`bus.topics.robot: "forereach/pl3-palletiser/robot/{station}": unknown placeholder`,
		`bus.password_file: a password without a username`,
		`bus.tls: TLS files are given but the broker`,
		`bus.tls: cert and key go together`,
		`bus.tracks[1]: "op 2": a track id is 1 to 64 bytes`,
		`bus.tracks[2]: "op1/right" listed twice`,
		`bus.max_payload: must be in 256..16777216 bytes, got 10`,
		`bus.qos: must be 0 or 1, got 2`,
		`bus.tick: must be in 1ms..5s, got 10s`,
		`bus.keepalive: must be in 1s..1h, got 100ms`,
		`bus.reconnect_max: must be in 100ms..10m, got 1h0m0s`,
		`bus.recording.max_bytes: must be at least 4096, got 100`,
		`bus.metrics: "9464": want host:port`,
	} {
		if !strings.Contains(msg, want) {
			t.Errorf("errors lack %q", want)
		}
	}
	if t.Failed() {
		t.Log(msg)
	}
}

func TestBusBrokerForms(t *testing.T) {
	for _, c := range []struct {
		broker string
		ok     bool
	}{
		{"tcp://127.0.0.1:1883", true},
		{"mqtt://localhost:1883", true},
		{"tcp://[::1]:1883", true},
		{"ssl://broker.example:8883", true},
		{"mqtts://broker.example:8883", true},
		{"tcp://broker.example:1883", false}, // plaintext off the machine
		{"http://127.0.0.1:1883", false},
		{"tcp://127.0.0.1", false},
		{"tcp://127.0.0.1:99999", false},
		{"127.0.0.1:1883", false},
	} {
		src := busTestCell + "bus:\n  broker: \"" + c.broker + "\"\n"
		_, err := Parse([]byte(src), "cell.yaml")
		if (err == nil) != c.ok {
			t.Errorf("broker %q: %v", c.broker, err)
		}
	}
	src := busTestCell + "bus:\n  broker: tcp://broker.example:1883\n  allow_plaintext: true\n"
	if _, err := Parse([]byte(src), "cell.yaml"); err != nil {
		t.Errorf("allow_plaintext: %v", err)
	}
}

func TestTopicMatch(t *testing.T) {
	for _, c := range []struct {
		filter, topic string
		want          bool
	}{
		// MQTT 3.1.1, section 4.7.1: "sport/#" also matches "sport".
		{"a/b/#", "a/b", true},
		{"a/b/#", "a/b/c/d", true},
		{"a/+/c", "a/b/c", true},
		{"a/+/c", "a/b/d", false},
		{"a/+", "a/b/c", false},
		{"a/b", "a/b", true},
		{"a/b", "a/bc", false},
		{"#", "anything/at/all", true},
	} {
		if got := TopicMatch(c.filter, c.topic); got != c.want {
			t.Errorf("TopicMatch(%q, %q) = %v", c.filter, c.topic, got)
		}
	}
}
