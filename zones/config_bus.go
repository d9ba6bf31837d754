package zones

// BusConfig is the MQTT side of the live service. Owned by the live-service
// work; fields may be added here.
type BusConfig struct {
	Broker         string          `yaml:"broker"`    // tcp://host:port, ssl://host:port
	ClientID       string          `yaml:"client_id"` // default forereach-<cell>
	Topics         TopicsConfig    `yaml:"topics"`
	Username       string          `yaml:"username"`
	PasswordFile   string          `yaml:"password_file"`
	TLS            TLSConfig       `yaml:"tls"`
	AllowPlaintext bool            `yaml:"allow_plaintext"` // permit plaintext to a non-loopback broker
	Recording      RecordingConfig `yaml:"recording"`
	Metrics        string          `yaml:"metrics"` // listen address for /metrics and /healthz; empty: off
}

// TopicsConfig is the topic layout; {cell} expands to the cell name.
type TopicsConfig struct {
	Prefix   string `yaml:"prefix"` // default "forereach/{cell}"
	Samples  string `yaml:"samples"`
	Robot    string `yaml:"robot"`
	Advisory string `yaml:"advisory"`
	State    string `yaml:"state"`
	Status   string `yaml:"status"`
}

// TLSConfig points at PEM files (relative to the config file).
type TLSConfig struct {
	CA   string `yaml:"ca"`
	Cert string `yaml:"cert"`
	Key  string `yaml:"key"`
}

// RecordingConfig controls the JSONL recording of the live service.
type RecordingConfig struct {
	Dir      string `yaml:"dir"`
	MaxSize  Length `yaml:"-"`
	MaxBytes int64  `yaml:"max_bytes"`
}
