package main

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"forereach/bus"
	"forereach/forecast"
	"forereach/sim"
	"forereach/zones"
)

var (
	simCell      = filepath.Join("..", "..", "testdata", "pl3-palletiser.yaml")
	simScenarios = filepath.Join("..", "..", "testdata", "scenarios")
)

// simRun runs the command and returns its exit code, stdout and stderr.
func simRun(args ...string) (int, string, string) {
	var out, errb bytes.Buffer
	code := run(append([]string{"simulate"}, args...), &out, &errb)
	return code, out.String(), errb.String()
}

// simSamples reads a recording back through bus.OpenSamples, failing on
// any row error.
func simSamples(t *testing.T, path string) []forecast.Sample {
	t.Helper()
	f, err := bus.OpenSamples(path, bus.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out []forecast.Sample
	for {
		s, err := f.Next()
		if errors.Is(err, io.EOF) {
			return out
		}
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		out = append(out, s)
	}
}

// The recordings read back with forereach's own readers, CSV and JSONL
// carry the same samples, and the summary counts them.
func TestSimulateRecordings(t *testing.T) {
	dir := t.TempDir()
	scen := filepath.Join(simScenarios, "demo.yaml")
	csvPath, jsonlPath := filepath.Join(dir, "demo.csv"), filepath.Join(dir, "demo.jsonl")
	for _, p := range []string{csvPath, jsonlPath} {
		if code, _, errs := simRun("-s", scen, "-c", simCell, "-o", p, "--seed", "11"); code != 0 {
			t.Fatalf("exit %d: %s", code, errs)
		}
	}
	a, b := simSamples(t, csvPath), simSamples(t, jsonlPath)
	if len(a) < 1000 || len(a) != len(b) {
		t.Fatalf("%d CSV samples, %d JSONL samples", len(a), len(b))
	}
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("sample %d: CSV %+v, JSONL %+v", i, a[i], b[i])
		}
	}
	// The same samples as the simulator gives in process.
	f, err := os.Open(scen)
	if err != nil {
		t.Fatal(err)
	}
	cell, err := zones.Load(simCell)
	if err != nil {
		t.Fatal(err)
	}
	sc, err := sim.Load(f, scen, cell)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	r := sc.Run(11)
	for i := 0; ; i++ {
		m, ok := r.Next()
		if !ok {
			if i != len(a) {
				t.Fatalf("%d samples in process, %d in the file", i, len(a))
			}
			break
		}
		if want := (forecast.Sample{Track: m.Track, T: m.T, P: m.P}); a[i] != want {
			t.Fatalf("sample %d: file %+v, in process %+v", i, a[i], want)
		}
	}
	// JSONL lines carry the simulated arrival, on the same axis as t.
	rr, err := os.Open(jsonlPath)
	if err != nil {
		t.Fatal(err)
	}
	defer rr.Close()
	rd := bus.NewRecordReader(rr, jsonlPath)
	n := 0
	for {
		rec, err := rd.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if rec.Kind == bus.KindHeader && rec.Header.Cell != "pl3-palletiser" {
			t.Errorf("header cell %q", rec.Header.Cell)
		}
		if rec.Kind == bus.KindSample {
			if d := rec.Sample.Arrival - rec.Sample.T; d < 0 || d > 0.1 {
				t.Fatalf("line %d: arrival − t = %g s (latency 20 ms ± 3 ms configured)", rec.Line, d)
			}
			n++
		}
	}
	if n != len(a) {
		t.Errorf("%d sample lines, want %d", n, len(a))
	}
}

// The same seed gives byte-identical files, another seed does not; run i
// of --runs N is the same file whatever N, and run 0 is the single run.
func TestSimulateReproducible(t *testing.T) {
	dir := t.TempDir()
	scen := filepath.Join(simScenarios, "infeed-clearing.yaml")
	read := func(p string) []byte {
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	for _, c := range [][]string{
		{"-o", filepath.Join(dir, "a.jsonl"), "--seed", "5"},
		{"-o", filepath.Join(dir, "b.jsonl"), "--seed", "5"},
		{"-o", filepath.Join(dir, "c.jsonl"), "--seed", "6"},
		{"-o", filepath.Join(dir, "r.jsonl"), "--seed", "5", "--runs", "3", "--summary", filepath.Join(dir, "sum.csv")},
		{"-o", filepath.Join(dir, "s.jsonl"), "--seed", "5", "--runs", "2"},
	} {
		if code, _, errs := simRun(append([]string{"-s", scen, "-c", simCell}, c...)...); code != 0 {
			t.Fatalf("%v: exit %d: %s", c, code, errs)
		}
	}
	a := read(filepath.Join(dir, "a.jsonl"))
	if !bytes.Equal(a, read(filepath.Join(dir, "b.jsonl"))) {
		t.Error("seed 5 twice: files differ")
	}
	if bytes.Equal(a, read(filepath.Join(dir, "c.jsonl"))) {
		t.Error("seeds 5 and 6: files are the same")
	}
	if !bytes.Equal(read(filepath.Join(dir, "r-000.jsonl")), a) {
		t.Error("run 0 of --runs 3 differs from the single run")
	}
	if !bytes.Equal(read(filepath.Join(dir, "r-001.jsonl")), read(filepath.Join(dir, "s-001.jsonl"))) {
		t.Error("run 1 differs between --runs 3 and --runs 2")
	}
	if bytes.Equal(read(filepath.Join(dir, "r-001.jsonl")), read(filepath.Join(dir, "r-002.jsonl"))) {
		t.Error("runs 1 and 2 are the same")
	}
	// The summary CSV: a header and one row per run, counts that match
	// the recordings.
	rows, err := csv.NewReader(bytes.NewReader(read(filepath.Join(dir, "sum.csv")))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 4 {
		t.Fatalf("%d summary rows, want header + 3", len(rows))
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for i, row := range rows[1:] {
		file := row[col["file"]]
		n := len(simSamples(t, file))
		if got, _ := strconv.Atoi(row[col["samples"]]); got != n {
			t.Errorf("run %d: summary says %d samples, %s has %d", i, got, file, n)
		}
		if _, ok := col["robot-envelope_entries"]; !ok {
			t.Errorf("no robot-envelope_entries column in %v", rows[0])
		}
	}
}

// The ground-truth file of the planted incidents carries the documented
// times (see testdata/scenarios/planted-incidents.yaml).
func TestSimulateTruth(t *testing.T) {
	dir := t.TempDir()
	tp := filepath.Join(dir, "truth.json")
	code, out, errs := simRun("-s", filepath.Join(simScenarios, "planted-incidents.yaml"), "-c", simCell,
		"-o", filepath.Join(dir, "p.csv"), "--truth", tp, "--near", "0.15")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "infeed-pick") {
		t.Errorf("summary without zones:\n%s", out)
	}
	b, err := os.ReadFile(tp)
	if err != nil {
		t.Fatal(err)
	}
	var tr truthFile
	if err := json.Unmarshal(b, &tr); err != nil {
		t.Fatal(err)
	}
	found := false
	for _, e := range tr.Entries {
		if e.Zone == "infeed-pick" {
			found = true
			if e.Track != "op1/right" || math.Abs(e.Enter-1.5) > 1e-7 || math.Abs(e.Exit-3.0) > 1e-7 {
				t.Errorf("infeed-pick entry %+v, want op1/right from 1.5 s to 3.0 s", e)
			}
		}
	}
	if !found || len(tr.Entries) != 2 {
		t.Errorf("entries %+v, want robot-envelope and infeed-pick", tr.Entries)
	}
	if len(tr.NearPasses) != 2 || math.Abs(tr.NearPasses[0].Dist-0.1) > 1e-9 || math.Abs(tr.NearPasses[1].Dist-0.05) > 1e-9 {
		t.Errorf("near passes %+v, want 0.10 m and 0.05 m", tr.NearPasses)
	}
	if len(tr.Losses) != 1 || tr.Losses[0] != (truthLoss{"op1/right", 6, 6.5}) {
		t.Errorf("losses %+v", tr.Losses)
	}
	if tr.Counts.Lost != 50 {
		t.Errorf("%d frames lost, want 50 (0.5 s at 100 Hz)", tr.Counts.Lost)
	}
}

// Usage errors exit 2, bad input 1 with the file position.
func TestSimulateErrors(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "bad.yaml")
	if err := os.WriteFile(bad, []byte("operators:\n  - name: op1\n    at: [0, 0]\n    timeline:\n      - reach: {hand: right, to: infeed}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	demo := filepath.Join(simScenarios, "demo.yaml")
	cases := []struct {
		args []string
		code int
		want string
	}{
		{[]string{"-o", "x.csv"}, 2, "-s SCENARIO.yaml is required"},
		{[]string{"-s", demo}, 2, "give -o FILE or --publish BROKER"},
		{[]string{"-s", demo, "-o", "x.csv", "--publish", "tcp://127.0.0.1:1"}, 2, "not both"},
		{[]string{"-s", demo, "-o", filepath.Join(dir, "x.txt")}, 2, `unknown recording type ".txt"`},
		{[]string{"-s", demo, "-o", filepath.Join(dir, "x.csv"), "--runs", "0"}, 2, "--runs must be at least 1"},
		{[]string{"-s", demo, "-o", filepath.Join(dir, "x.csv"), "--seed", "-3"}, 2, "--seed"},
		{[]string{"-s", demo, "-o", filepath.Join(dir, "x.csv"), "--speed", "-1"}, 2, "--speed"},
		{[]string{"-s", bad, "-o", filepath.Join(dir, "x.csv")}, 1, bad + `:5:34: operators[0] "op1".timeline[0].reach.to: unknown station "infeed"`},
		{[]string{"-s", demo, "-o", filepath.Join(dir, "x.csv")}, 1, `unknown station "infeed"`}, // demo needs the cell's stations
		{[]string{"-s", filepath.Join(dir, "missing.yaml"), "-o", filepath.Join(dir, "x.csv")}, 1, "missing.yaml"},
		{[]string{"-s", demo, "-c", simCell, "--publish", "tcp://127.0.0.1:1"}, 1, "127.0.0.1:1"},
	}
	for _, c := range cases {
		code, _, errs := simRun(c.args...)
		if code != c.code || !strings.Contains(errs, c.want) {
			t.Errorf("%v: exit %d, stderr\n%s\nwant exit %d and %q", c.args, code, errs, c.code, c.want)
		}
	}
}

// simBroker returns the address of a Mosquitto to test against: the one
// CI started (FOREREACH_MOSQUITTO), or one started here when mosquitto is
// installed; it skips the test otherwise.
func simBroker(t *testing.T) string {
	t.Helper()
	if addr := os.Getenv("FOREREACH_MOSQUITTO"); addr != "" {
		return addr
	}
	path, err := exec.LookPath("mosquitto")
	if err != nil {
		if _, e := os.Stat("/usr/sbin/mosquitto"); e != nil {
			t.Skip("no broker: FOREREACH_MOSQUITTO unset and mosquitto not installed")
		}
		path = "/usr/sbin/mosquitto"
	}
	if _, err := exec.LookPath("mosquitto_sub"); err != nil {
		t.Skip("mosquitto_sub not installed")
	}
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	port := l.Addr().(*net.TCPAddr).Port
	l.Close()
	conf := filepath.Join(t.TempDir(), "mosquitto.conf")
	if err := os.WriteFile(conf, []byte(fmt.Sprintf("listener %d 127.0.0.1\nallow_anonymous true\nset_tcp_nodelay true\n", port)), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(path, "-c", conf)
	if err := cmd.Start(); err != nil {
		t.Skipf("cannot start mosquitto: %v", err)
	}
	t.Cleanup(func() { cmd.Process.Kill(); cmd.Wait() })
	addr := fmt.Sprintf("127.0.0.1:%d", port)
	for i := 0; i < 100; i++ {
		if c, err := net.Dial("tcp", addr); err == nil {
			c.Close()
			return addr
		}
		time.Sleep(50 * time.Millisecond)
	}
	t.Fatalf("mosquitto did not listen on %s", addr)
	return ""
}

// Publishing: an independent client (mosquitto_sub) receives every sample
// of the run, in order, with the simulated positions and source times
// offset by the start time; at --speed 20 the 9 s scenario takes at least
// 9/20 s.
func TestSimulatePublish(t *testing.T) {
	addr := simBroker(t)
	host, port, _ := net.SplitHostPort(addr)
	scen := filepath.Join(simScenarios, "planted-incidents.yaml")
	dir := t.TempDir()
	ref := filepath.Join(dir, "ref.csv")
	if code, _, errs := simRun("-s", scen, "-c", simCell, "-o", ref, "--seed", "3"); code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	want := simSamples(t, ref)

	topic := "forereach/pl3-palletiser/hands"
	subArgs := []string{"mosquitto_sub", "-d", "-h", host, "-p", port, "-t", topic, "-C", strconv.Itoa(len(want)), "-W", "120"}
	// mosquitto_sub buffers its output on a pipe; line-buffer it so that
	// its SUBACK line shows when it is subscribed.
	if sb, err := exec.LookPath("stdbuf"); err == nil {
		subArgs = append([]string{sb, "-oL"}, subArgs...)
	}
	sub := exec.Command(subArgs[0], subArgs[1:]...)
	stdout, err := sub.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := sub.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { sub.Process.Kill(); sub.Wait() })
	lines := make(chan string, len(want)+100)
	subscribed := make(chan struct{})
	go func() {
		sc := bufio.NewScanner(stdout)
		once := false
		for sc.Scan() {
			l := sc.Text()
			if strings.Contains(l, "SUBACK") && !once {
				once = true
				close(subscribed)
			}
			if strings.HasPrefix(l, "{") {
				lines <- l
			}
		}
		close(lines)
	}()
	select {
	case <-subscribed:
	case <-time.After(5 * time.Second):
		// without stdbuf the SUBACK line stays in mosquitto_sub's buffer;
		// it has subscribed long since
	}

	start := time.Now()
	code, out, errs := simRun("-s", scen, "-c", simCell, "--publish", "tcp://"+addr, "--seed", "3", "--speed", "20")
	elapsed := time.Since(start)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "scenario planted-incidents") {
		t.Errorf("no summary:\n%s", out)
	}
	if elapsed < 9*time.Second/20 {
		t.Errorf("9 s of samples published in %v at --speed 20", elapsed)
	}
	var got []bus.SampleRecord
	var dec bus.SampleDecoder
	for l := range lines {
		recs, perrs := dec.Decode(topic, []byte(l))
		if len(perrs) > 0 {
			t.Fatalf("payload %s: %v", l, perrs[0])
		}
		got = append(got, recs...)
	}
	if len(got) != len(want) {
		t.Fatalf("received %d samples, want %d", len(got), len(want))
	}
	base := got[0].T - want[0].T
	if now := float64(time.Now().UnixNano()) / 1e9; math.Abs(base-now) > 60 {
		t.Errorf("source times offset by %g, not the Unix time of the start (%g)", base, now)
	}
	for i := range want {
		g := got[i].Sample
		// the offset is added to t, so compare with the rounding of a sum
		if g.Track != want[i].Track || g.P != want[i].P || math.Abs(g.T-base-want[i].T) > 1e-6 {
			t.Fatalf("sample %d: received %+v, want %+v (t offset %g)", i, g, want[i], base)
		}
	}
}
