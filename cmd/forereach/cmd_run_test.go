package main

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"io"
	"math"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	mqtt "github.com/eclipse/paho.mqtt.golang"

	"forereach/bus"
	"forereach/forecast"
	"forereach/safety"

	"gonum.org/v1/gonum/spatial/r3"
)

// The interop tests run forereach itself as a separate process (this test
// binary, re-executed with FOREREACH_TEST_AS_MAIN=1), so that it can be
// killed like a real service.
func TestMain(m *testing.M) {
	if os.Getenv("FOREREACH_TEST_AS_MAIN") == "1" {
		os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// service is forereach running as a child process.
type service struct {
	cmd    *exec.Cmd
	stderr *lockedBuffer
	done   chan struct{} // closed when the process has exited
	err    error         // its exit status, once done
}

type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

func startService(t *testing.T, args ...string) *service {
	t.Helper()
	cmd := exec.Command(os.Args[0], args...)
	cmd.Env = append(os.Environ(), "FOREREACH_TEST_AS_MAIN=1")
	s := &service{cmd: cmd, stderr: &lockedBuffer{}, done: make(chan struct{})}
	cmd.Stderr = s.stderr
	cmd.Stdout = s.stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { s.err = cmd.Wait(); close(s.done) }()
	t.Cleanup(func() {
		select {
		case <-s.done:
		default:
			cmd.Process.Kill()
			<-s.done
		}
		if t.Failed() {
			t.Logf("service log:\n%s", s.stderr.String())
		}
	})
	return s
}

// mosquitto is a Mosquitto broker started by a test on a fixed port, so
// that it can be stopped and started again at the same address.
type mosquitto struct {
	t    *testing.T
	path string
	conf string
	addr string
	cmd  *exec.Cmd
}

// needMosquitto skips the test unless Debian's mosquitto and
// mosquitto-clients are installed.
func needMosquitto(t *testing.T) string {
	t.Helper()
	path, err := exec.LookPath("mosquitto")
	if err != nil {
		if _, e := os.Stat("/usr/sbin/mosquitto"); e != nil {
			t.Skip("mosquitto is not installed (apt-get install mosquitto mosquitto-clients); .ci/run installs it")
		}
		path = "/usr/sbin/mosquitto"
	}
	for _, c := range []string{"mosquitto_pub", "mosquitto_sub"} {
		if _, err := exec.LookPath(c); err != nil {
			t.Skipf("%s is not installed (apt-get install mosquitto-clients)", c)
		}
	}
	return path
}

func freePort(t *testing.T) int {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

func newMosquitto(t *testing.T) *mosquitto {
	path := needMosquitto(t)
	port := freePort(t)
	conf := filepath.Join(t.TempDir(), "mosquitto.conf")
	// Nagle off, as every broker configuration forereach ships.
	text := fmt.Sprintf("listener %d 127.0.0.1\nallow_anonymous true\nset_tcp_nodelay true\npersistence false\n", port)
	if err := os.WriteFile(conf, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	m := &mosquitto{t: t, path: path, conf: conf, addr: fmt.Sprintf("127.0.0.1:%d", port)}
	m.start()
	t.Cleanup(m.stop)
	return m
}

func (m *mosquitto) start() {
	m.t.Helper()
	m.cmd = exec.Command(m.path, "-c", m.conf)
	if err := m.cmd.Start(); err != nil {
		m.t.Fatalf("start mosquitto: %v", err)
	}
	for i := 0; i < 200; i++ {
		if c, err := net.Dial("tcp", m.addr); err == nil {
			c.Close()
			return
		}
		time.Sleep(10 * time.Millisecond)
	}
	m.t.Fatalf("mosquitto did not listen on %s", m.addr)
}

func (m *mosquitto) stop() {
	if m.cmd == nil {
		return
	}
	m.cmd.Process.Signal(syscall.SIGTERM)
	m.cmd.Wait()
	m.cmd = nil
}

// subscriber is mosquitto_sub from Debian's mosquitto-clients: an
// independent client that prints every message with its own receive time.
type subscriber struct {
	cmd  *exec.Cmd
	mu   sync.Mutex
	msgs []subMsg
	note chan struct{}
}

type subMsg struct {
	at       float64 // Unix time mosquitto_sub received it
	retained bool
	topic    string
	payload  string
}

func startSub(t *testing.T, addr string, topics ...string) *subscriber {
	t.Helper()
	host, port, _ := net.SplitHostPort(addr)
	args := []string{"-h", host, "-p", port, "-q", "1", "--nodelay", "-F", "%U %r %t %p"}
	for _, tp := range topics {
		args = append(args, "-t", tp)
	}
	s := &subscriber{cmd: exec.Command("mosquitto_sub", args...), note: make(chan struct{}, 1)}
	out, err := s.cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := s.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() {
		sc := bufio.NewScanner(out)
		sc.Buffer(make([]byte, 1<<20), 1<<20)
		for sc.Scan() {
			f := strings.SplitN(sc.Text(), " ", 4)
			if len(f) < 4 {
				continue
			}
			at, _ := strconv.ParseFloat(f[0], 64)
			s.mu.Lock()
			s.msgs = append(s.msgs, subMsg{at: at, retained: f[1] == "1", topic: f[2], payload: f[3]})
			s.mu.Unlock()
			select {
			case s.note <- struct{}{}:
			default:
			}
		}
	}()
	t.Cleanup(s.stop)
	return s
}

func (s *subscriber) stop() {
	if s.cmd.Process != nil {
		s.cmd.Process.Kill()
		s.cmd.Wait()
	}
}

func (s *subscriber) all(topic string) []subMsg {
	s.mu.Lock()
	defer s.mu.Unlock()
	var out []subMsg
	for _, m := range s.msgs {
		if m.topic == topic {
			out = append(out, m)
		}
	}
	return out
}

// waitFor waits until ok returns a message index >= 0 or the timeout passes.
func (s *subscriber) waitFor(t *testing.T, what string, timeout time.Duration, ok func() bool) {
	t.Helper()
	deadline := time.After(timeout)
	for !ok() {
		select {
		case <-s.note:
		case <-time.After(20 * time.Millisecond):
		case <-deadline:
			t.Fatalf("timed out after %v waiting for %s", timeout, what)
		}
	}
}

// publisher is mosquitto_pub -l: one message per line written to it.
type publisher struct {
	cmd *exec.Cmd
	in  io.WriteCloser
}

func startPub(t *testing.T, addr, topic string) *publisher {
	t.Helper()
	host, port, _ := net.SplitHostPort(addr)
	p := &publisher{cmd: exec.Command("mosquitto_pub", "-h", host, "-p", port, "-q", "0", "--nodelay", "-t", topic, "-l")}
	var err error
	if p.in, err = p.cmd.StdinPipe(); err != nil {
		t.Fatal(err)
	}
	if err := p.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(p.stop)
	return p
}

func (p *publisher) stop() {
	if p.cmd.Process != nil {
		p.in.Close()
		p.cmd.Process.Kill()
		p.cmd.Wait()
	}
}

// handAt is the position of a hand that reaches from the walkway into the
// robot envelope of pl3-palletiser and back, once every 2 s.
func handAt(t float64) r3.Vec {
	ph := math.Mod(t, 2) / 2
	s := (1 - math.Cos(2*math.Pi*ph)) / 2
	return r3.Vec{X: 1.6 + 1.9*s, Y: 0.8, Z: 1.0}
}

// feed writes samples at 100 Hz with the Unix time as source time until
// stop is closed.
func feed(w io.Writer, stop <-chan struct{}, wg *sync.WaitGroup) {
	defer wg.Done()
	tick := time.NewTicker(10 * time.Millisecond)
	defer tick.Stop()
	var buf []byte
	for {
		select {
		case <-stop:
			return
		case now := <-tick.C:
			t := float64(now.UnixNano()) / 1e9
			s := bus.SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: t, P: handAt(t)}}
			buf = append(bus.EncodeSample(buf[:0], &s), '\n')
			if _, err := w.Write(buf); err != nil {
				return
			}
		}
	}
}

// interopCell writes a copy of the example cell using broker addr, with the
// cv forecaster and the recording in dir.
func interopCell(t *testing.T, addr, dir string) string {
	t.Helper()
	src, err := os.ReadFile("../../testdata/pl3-palletiser.yaml")
	if err != nil {
		t.Fatal(err)
	}
	text := string(src)
	for _, r := range []struct{ re, new string }{
		{`(?m)^  broker: .*$`, "  broker: tcp://" + addr},
		{`(?m)^  model: .*$`, "  model: cv"},
		{`(?m)^    dir: .*$`, "    dir: " + filepath.Join(dir, "rec")},
	} {
		re := regexp.MustCompile(r.re)
		if !re.MatchString(text) {
			t.Fatalf("example cell has no line matching %s", r.re)
		}
		text = re.ReplaceAllLiteralString(text, r.new)
	}
	path := filepath.Join(dir, "cell.yaml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// Interop with Mosquitto from Debian's packages, through independent
// clients (mosquitto_pub and mosquitto_sub from mosquitto-clients): samples
// in, advisories out; the broker stopped and started again mid-stream (the
// service reconnects, resubscribes, and advisories are back within 3 s of
// the broker's return); the service killed (the broker publishes its
// offline status, its last will).
func TestRunMosquittoInterop(t *testing.T) {
	broker := newMosquitto(t)
	dir := t.TempDir()
	cell := interopCell(t, broker.addr, dir)
	const (
		hands  = "forereach/pl3-palletiser/hands"
		event  = "forereach/pl3-palletiser/advisory/event"
		state  = "forereach/pl3-palletiser/advisory/state"
		status = "forereach/pl3-palletiser/status"
	)
	sub := startSub(t, broker.addr, event, status)
	svc := startService(t, "run", "-c", cell)
	lastStatus := func(s *subscriber) (bus.Status, bool) {
		ms := s.all(status)
		if len(ms) == 0 {
			return bus.Status{}, false
		}
		st, err := bus.DecodeStatus([]byte(ms[len(ms)-1].payload))
		return st, err == nil
	}
	sub.waitFor(t, "online status", 10*time.Second, func() bool {
		st, ok := lastStatus(sub)
		return ok && st.State == bus.StateOnline
	})

	pub := startPub(t, broker.addr, hands)
	stopFeed := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go feed(pub.in, stopFeed, &wg)

	levels := func(ms []subMsg) map[string]int {
		out := map[string]int{}
		for _, m := range ms {
			if a, err := bus.DecodeAdvisory([]byte(m.payload)); err == nil {
				out[a.Level]++
			}
		}
		return out
	}
	sub.waitFor(t, "advisories of every level", 15*time.Second, func() bool {
		l := levels(sub.all(event))
		return l["clear"] > 0 && l["reduce"] > 0 && l["hold"] > 0
	})
	var prev uint64
	for i, m := range sub.all(event) {
		a, err := bus.DecodeAdvisory([]byte(m.payload))
		if err != nil {
			t.Fatalf("advisory %d: %v: %s", i, err, m.payload)
		}
		if a.Cell != "pl3-palletiser" || a.AdvisoryOnly != safety.Short || a.Horizon <= 0 || m.retained {
			t.Errorf("advisory %d: %+v (retained %v)", i, a, m.retained)
		}
		if i > 0 && a.Seq != prev+1 {
			t.Errorf("advisory %d: seq %d after %d", i, a.Seq, prev)
		}
		if a.Level != "clear" && len(a.Reasons) == 0 {
			t.Errorf("advisory %d: level %s without reasons", i, a.Level)
		}
		prev = a.Seq
	}

	// Stop the broker mid-stream and start it again at the same address.
	close(stopFeed)
	wg.Wait()
	pub.stop()
	sub.stop()
	broker.stop()
	time.Sleep(1500 * time.Millisecond)
	broker.start()
	back := float64(time.Now().UnixNano()) / 1e9
	sub2 := startSub(t, broker.addr, event, status)
	pub2 := startPub(t, broker.addr, hands)
	stopFeed = make(chan struct{})
	wg.Add(1)
	go feed(pub2.in, stopFeed, &wg)
	sub2.waitFor(t, "the first advisory after the broker's return", 5*time.Second, func() bool { return len(sub2.all(event)) > 0 })
	first := sub2.all(event)[0]
	if d := first.at - back; d > 3 {
		t.Errorf("first advisory %.2f s after the broker's return, want within 3 s", d)
	} else {
		t.Logf("first advisory %.2f s after the broker's return", d)
	}
	if st, ok := lastStatus(sub2); !ok || st.State != bus.StateOnline {
		t.Errorf("status after reconnection: %+v", st)
	}
	// Samples published after the return reach the service again: an
	// advisory computed from one of them (its time t is the time of the
	// sample that caused it) arrives.
	sub2.waitFor(t, "an advisory caused by samples after the return", 10*time.Second, func() bool {
		for _, m := range sub2.all(event) {
			if a, err := bus.DecodeAdvisory([]byte(m.payload)); err == nil && a.T > back {
				return true
			}
		}
		return false
	})
	close(stopFeed)
	wg.Wait()

	// Kill the service: the broker publishes the offline status.
	killedAt := time.Now()
	svc.cmd.Process.Kill()
	<-svc.done
	sub2.waitFor(t, "offline status (last will)", 10*time.Second, func() bool {
		st, ok := lastStatus(sub2)
		return ok && st.State == bus.StateOffline
	})
	t.Logf("offline status %.2f s after the kill", time.Since(killedAt).Seconds())
	// And it is retained: a consumer arriving now sees it.
	late := startSub(t, broker.addr, status)
	late.waitFor(t, "retained offline status", 5*time.Second, func() bool {
		ms := late.all(status)
		if len(ms) == 0 {
			return false
		}
		st, err := bus.DecodeStatus([]byte(ms[0].payload))
		return err == nil && ms[0].retained && st.State == bus.StateOffline && st.AdvisoryOnly == safety.Short
	})
}

// forereach run with an embedded broker: SIGTERM stops it cleanly (exit
// 0), and the recording holds every sample that was accepted.
func TestRunEmbeddedBrokerSIGTERM(t *testing.T) {
	dir := t.TempDir()
	port := freePort(t)
	addr := fmt.Sprintf("127.0.0.1:%d", port)
	metrics := fmt.Sprintf("127.0.0.1:%d", freePort(t))
	cell := interopCell(t, addr, dir)
	svc := startService(t, "run", "-c", cell, "--embedded-broker", addr, "--metrics", metrics)

	var c mqtt.Client
	deadline := time.Now().Add(10 * time.Second)
	for {
		c = mqtt.NewClient(mqtt.NewClientOptions().AddBroker("tcp://" + addr).SetClientID("sigterm-source"))
		if tok := c.Connect(); tok.WaitTimeout(2*time.Second) && tok.Error() == nil {
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("embedded broker not reachable")
		}
		time.Sleep(50 * time.Millisecond)
	}
	defer c.Disconnect(100)
	waitMetric(t, metrics, "forereach_broker_connected 1")
	const n = 500
	t0 := float64(time.Now().Add(-10*time.Second).UnixNano()) / 1e9
	for i := 0; i < n; i++ {
		s := bus.SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: t0 + float64(i)*0.01, P: handAt(float64(i) * 0.01)}}
		c.Publish("forereach/pl3-palletiser/hands", 1, false, bus.EncodeSample(nil, &s)).Wait()
	}
	waitMetric(t, metrics, fmt.Sprintf("forereach_samples_total %d", n))
	if body := httpBody(t, "http://"+metrics+"/healthz"); body != "ok\n" {
		t.Errorf("/healthz: %q", body)
	}
	svc.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-svc.done:
		if svc.err != nil {
			t.Fatalf("after SIGTERM: %v", svc.err)
		}
	case <-time.After(10 * time.Second):
		t.Fatal("no exit within 10 s of SIGTERM")
	}
	files, _ := filepath.Glob(filepath.Join(dir, "rec", "*.jsonl"))
	if len(files) != 1 {
		t.Fatalf("recordings: %v", files)
	}
	f, err := bus.OpenSamples(files[0], bus.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	got := 0
	for {
		s, err := f.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if s.T != t0+float64(got)*0.01 {
			t.Fatalf("sample %d at t=%v", got, s.T)
		}
		got++
	}
	if got != n {
		t.Errorf("recording holds %d samples, want %d", got, n)
	}
}

func waitMetric(t *testing.T, addr, line string) {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for {
		if strings.Contains(httpBody(t, "http://"+addr+"/metrics"), line+"\n") {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("/metrics never showed %q", line)
		}
		time.Sleep(50 * time.Millisecond)
	}
}

func httpBody(t *testing.T, url string) string {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Second)
	defer cancel()
	req, _ := http.NewRequestWithContext(ctx, "GET", url, nil)
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		return ""
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	return string(b)
}

func TestRunUsage(t *testing.T) {
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"run"}, 2, "-c CELL.yaml is required"},
		{[]string{"run", "-c", "x.yaml", "--broker", "tcp://127.0.0.1:1", "--embedded-broker", "127.0.0.1:1"}, 2, "not both"},
		{[]string{"run", "-c", "x.yaml", "--log-level", "loud"}, 2, "--log-level"},
		{[]string{"run", "-c", "does-not-exist.yaml"}, 1, "does-not-exist.yaml"},
		{[]string{"run", "-c", "../../testdata/pl3-palletiser.yaml", "--embedded-broker", "0.0.0.0:0"}, 1, "loopback"},
	} {
		var out, errb bytes.Buffer
		code := run(c.args, &out, &errb)
		if code != c.code || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v: exit %d, stderr %q; want %d and %q", c.args, code, errb.String(), c.code, c.want)
		}
	}
	var out bytes.Buffer
	if code := run([]string{"help", "run"}, &out, io.Discard); code != 0 || !strings.Contains(out.String(), safety.Notice) {
		t.Errorf("help run: exit %d, safety notice present: %v", code, strings.Contains(out.String(), safety.Notice))
	}
}
