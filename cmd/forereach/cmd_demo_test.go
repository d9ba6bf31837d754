package main

import (
	"bytes"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"forereach/bus"
	"forereach/safety"
)

// readRecording reads every line of the recordings in dir with bus's
// reader (the one review uses).
func readRecording(t *testing.T, dir string) map[bus.Kind][]bus.Record {
	t.Helper()
	files, _ := filepath.Glob(filepath.Join(dir, "*.jsonl"))
	if len(files) == 0 {
		t.Fatalf("no recording in %s", dir)
	}
	out := map[bus.Kind][]bus.Record{}
	for _, name := range files {
		f, err := os.Open(name)
		if err != nil {
			t.Fatal(err)
		}
		rr := bus.NewRecordReader(f, name)
		for {
			r, err := rr.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("%v", err)
			}
			out[r.Kind] = append(out[r.Kind], r)
		}
		f.Close()
	}
	return out
}

var viewLine = regexp.MustCompile(`(?m)^ *[0-9.]+s  (clear|reduce|hold) +[0-9.]+  (.*)$`)

func TestDemo(t *testing.T) {
	for _, c := range []struct {
		name, scenario, duration string
	}{
		{"scenario", "../../testdata/scenarios/demo.yaml", "5s"},
		{"builtin", "builtin", "4s"},
	} {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			var out, errb bytes.Buffer
			code := run([]string{"demo", "-c", "../../testdata/pl3-palletiser.yaml", "--scenario", c.scenario,
				"--duration", c.duration, "--record", dir}, &out, &errb)
			if code != 0 {
				t.Fatalf("exit %d\nstdout:\n%s\nstderr:\n%s", code, out.String(), errb.String())
			}
			text := out.String()
			if !strings.Contains(text, safety.Short) {
				t.Error("the view does not say that it is advisory only")
			}
			levels := map[string]int{}
			lines := viewLine.FindAllStringSubmatch(text, -1)
			for _, m := range lines {
				levels[m[1]]++
				if m[1] != "clear" && m[2] == "-" {
					t.Errorf("a %s advisory without reasons: %q", m[1], m[0])
				}
			}
			if len(levels) < 2 {
				t.Errorf("advisories of %d level(s) shown (%v), want more than one\n%s", len(levels), levels, text)
			}
			if !regexp.MustCompile(`\d+ samples, \d+ robot states, 0 rejected; advisories: clear \d+, reduce \d+, hold \d+`).MatchString(text) {
				t.Errorf("no summary line in\n%s", text)
			}
			rec := readRecording(t, dir)
			if len(rec[bus.KindHeader]) != 1 || rec[bus.KindHeader][0].Header.Cell != "pl3-palletiser" {
				t.Errorf("headers %v", rec[bus.KindHeader])
			}
			if len(rec[bus.KindSample]) < 100 || len(rec[bus.KindRobot]) < 50 {
				t.Errorf("%d samples and %d robot states recorded", len(rec[bus.KindSample]), len(rec[bus.KindRobot]))
			}
			// Every advisory shown is in the recording, in the same order.
			advs := rec[bus.KindAdvisory]
			if len(advs) != len(lines) {
				t.Fatalf("%d advisories recorded, %d shown", len(advs), len(lines))
			}
			for i, a := range advs {
				if a.Advisory.Level != lines[i][1] || a.Advisory.Seq != uint64(i+1) || a.Advisory.AdvisoryOnly != safety.Short {
					t.Errorf("recorded advisory %d: %+v, shown %q", i, a.Advisory, lines[i][0])
				}
			}
		})
	}
}

func TestDemoUsage(t *testing.T) {
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"demo", "--duration", "0s"}, 2, "--duration must be positive"},
		{[]string{"demo", "--record", "x", "--no-record"}, 2, "not both"},
		{[]string{"demo", "extra"}, 2, "unexpected argument"},
		{[]string{"demo", "-c", "nope.yaml"}, 1, "nope.yaml"},
		{[]string{"demo", "-c", "../../testdata/pl3-palletiser.yaml", "--scenario", "nope.yaml"}, 1, "nope.yaml"},
	} {
		var out, errb bytes.Buffer
		code := run(c.args, &out, &errb)
		if code != c.code || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v: exit %d, stderr %q; want %d and %q", c.args, code, errb.String(), c.code, c.want)
		}
	}
}

// Ctrl-C ends the demo early, cleanly, with the recording left behind.
func TestDemoInterrupt(t *testing.T) {
	dir := t.TempDir()
	d := startService(t, "demo", "-c", "../../testdata/pl3-palletiser.yaml", "--scenario", "builtin",
		"--duration", "60s", "--record", dir)
	deadline := time.Now().Add(20 * time.Second)
	for !strings.Contains(d.stderr.String(), "time  level") {
		if time.Now().After(deadline) {
			t.Fatal("the demo did not start within 20 s")
		}
		time.Sleep(20 * time.Millisecond)
	}
	time.Sleep(1500 * time.Millisecond)
	d.cmd.Process.Signal(os.Interrupt)
	select {
	case <-d.done:
	case <-time.After(15 * time.Second):
		t.Fatal("the demo did not stop within 15 s of the interrupt")
	}
	if d.err != nil {
		t.Fatalf("exit after the interrupt: %v\n%s", d.err, d.stderr.String())
	}
	rec := readRecording(t, dir)
	if len(rec[bus.KindSample]) < 50 {
		t.Errorf("%d samples recorded in 1.5 s", len(rec[bus.KindSample]))
	}
	if !strings.Contains(d.stderr.String(), "recording: "+dir) {
		t.Errorf("the demo does not say where the recording is:\n%s", d.stderr.String())
	}
}
