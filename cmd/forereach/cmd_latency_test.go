package main

import (
	"bytes"
	"regexp"
	"strings"
	"testing"

	"forereach/bus"
)

// forereach latency through the embedded broker at a gentle rate: the
// table has both paths, each with a count and quantiles.
func TestLatencyCommand(t *testing.T) {
	b, err := bus.StartBroker("127.0.0.1:0", nil)
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	var out, errb bytes.Buffer
	code := run([]string{"latency", "-c", "../../testdata/pl3-palletiser.yaml", "--broker", b.URL(),
		"--rate", "300", "--duration", "1s"}, &out, &errb)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	text := out.String()
	for _, path := range []string{`publish -> advisory \(service\)`, `publish -> echo \(no processing\)`} {
		re := regexp.MustCompile(path + `\s+(\d+)\s+[0-9.]+ ms\s+[0-9.]+ ms\s+[0-9.]+ ms\s+[0-9.]+ ms\s+[0-9.]+ ms`)
		m := re.FindStringSubmatch(text)
		if m == nil || m[1] == "0" {
			t.Errorf("no measurements for %s in\n%s", path, text)
		}
	}
	if !strings.Contains(text, "0 rejected") {
		t.Errorf("the service rejected samples:\n%s", text)
	}
}

func TestLatencyUsage(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"latency", "--rate", "0"}, "--rate must be in"},
		{[]string{"latency", "--rate", "1e6"}, "--rate must be in"},
		{[]string{"latency", "--duration", "-1s"}, "--duration must be positive"},
		{[]string{"latency", "x"}, "unexpected argument"},
	} {
		var out, errb bytes.Buffer
		if code := run(c.args, &out, &errb); code != 2 || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v: exit %d, %q", c.args, code, errb.String())
		}
	}
}
