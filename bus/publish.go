package bus

import (
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"sync"
	"time"

	mqtt "github.com/eclipse/paho.mqtt.golang"
)

// Publisher is a source-side MQTT client: it publishes hand samples and
// robot states at QoS 0, in order, on one connection, as a tracking system
// or a robot bridge would. The simulator's --publish and the demo use it.
// It is safe for use by several goroutines.
type Publisher struct {
	url  string
	c    mqtt.Client
	mu   sync.Mutex
	last mqtt.Token
	buf  []byte
}

// ErrNotConnected reports a publish on a lost connection.
var ErrNotConnected = errors.New("connection to the broker lost")

// DialPublisher connects to broker (tcp://host:port, ssl://host:port, or
// host:port for tcp) with client id id. It does not reconnect: a source
// that loses its broker says so.
func DialPublisher(broker, id string) (*Publisher, error) {
	url := broker
	if !strings.Contains(url, "://") {
		url = "tcp://" + url
	}
	opts := mqtt.NewClientOptions().AddBroker(url).SetClientID(id).SetCleanSession(true).
		SetConnectTimeout(10 * time.Second).SetAutoReconnect(false).SetConnectRetry(false).SetOrderMatters(true)
	c := mqtt.NewClient(opts)
	tok := c.Connect()
	if !tok.WaitTimeout(15 * time.Second) {
		return nil, fmt.Errorf("%s: no answer from the broker within 15 s", url)
	}
	if err := tok.Error(); err != nil {
		return nil, fmt.Errorf("%s: %w", url, err)
	}
	return &Publisher{url: url, c: c}, nil
}

// Sample publishes the single-sample payload of s on topic.
func (p *Publisher) Sample(topic string, s *SampleRecord) error {
	p.mu.Lock()
	p.buf = EncodeSample(p.buf[:0], s)
	payload := append([]byte(nil), p.buf...) // the client keeps the slice
	p.mu.Unlock()
	return p.publish(topic, payload)
}

// Robot publishes the robot-state payload of st on topic.
func (p *Publisher) Robot(topic string, st *RobotState) error {
	b, err := json.Marshal(struct {
		V int `json:"v"`
		*RobotState
	}{Version, st})
	if err != nil {
		return err
	}
	return p.publish(topic, b)
}

func (p *Publisher) publish(topic string, payload []byte) error {
	if !p.c.IsConnectionOpen() {
		return fmt.Errorf("%s: %w", p.url, ErrNotConnected)
	}
	tok := p.c.Publish(topic, 0, false, payload)
	p.mu.Lock()
	p.last = tok
	p.mu.Unlock()
	return nil
}

// Flush waits until the last message has been handed to the network.
func (p *Publisher) Flush(timeout time.Duration) error {
	p.mu.Lock()
	last := p.last
	p.mu.Unlock()
	if last == nil {
		return nil
	}
	if !last.WaitTimeout(timeout) {
		return fmt.Errorf("%s: messages not sent within %v", p.url, timeout)
	}
	return last.Error()
}

// Close disconnects, giving in-flight messages 250 ms.
func (p *Publisher) Close() { p.c.Disconnect(250) }
