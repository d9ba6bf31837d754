package zones

import (
	"errors"
	"strings"
	"testing"
	"time"
)

const policyTestCell = `cell: pl3-palletiser
zones:
  - name: pallet-a
    box: {min: [4.8, 0.6, 0.0], max: [6.0, 1.4, 2.0]}
`

func TestPolicyDefaults(t *testing.T) {
	cfg, err := Parse([]byte(policyTestCell), "cell.yaml")
	if err != nil {
		t.Fatal(err)
	}
	p := cfg.Policy
	if len(p.Rules) != 2 || p.Rules[0].Name != "approach" || p.Rules[1].Name != "imminent" ||
		p.Rules[0].Level != "reduce" || p.Rules[0].Scale != 0.5 || time.Duration(p.Rules[0].EntryWithin) != 400*time.Millisecond ||
		p.Rules[1].Level != "hold" || !p.Rules[1].Inside || time.Duration(p.Rules[1].EntryWithin) != 150*time.Millisecond {
		t.Errorf("default rules %+v", p.Rules)
	}
	if time.Duration(p.Release) != time.Second || time.Duration(p.StaleAfter) != 300*time.Millisecond ||
		p.NearTrack != 0.5 || p.MaxSpeed != 10 || p.NearMiss != 0.1 || time.Duration(p.FalseAlarmWindow) != time.Second {
		t.Errorf("defaults %+v", p)
	}
}

func TestPolicyDefaultRulesCanBeNamed(t *testing.T) {
	src := strings.Replace(policyTestCell, "    box:", "    rules: [imminent]\n    box:", 1)
	if _, err := Parse([]byte(src), "cell.yaml"); err != nil {
		t.Errorf("a zone naming a default rule: %v", err)
	}
}

func TestPolicyAndRobotChecks(t *testing.T) {
	src := policyTestCell + `policy:
  rules:
    - name: slow
      level: reduce
      scale: 1.5
      entry_within: 300ms
    - name: slow
      level: hold
      inside: true
    - name: tracking-lost
      level: hold
      inside: true
    - name: nothing
      level: reduce
      scale: 0.5
    - name: odd
      level: stop
      inside: true
    - name: holdscale
      level: hold
      scale: 0.3
      inside: true
  max_speed: -1
robot:
  frames:
    - name: tool
      pos: [0, 0, 0]
      quat: [0, 0, 0, 0]
    - name: tool
      pos: [0, 0, 0]
  stopping_distance: -0.1
  detection_capability: 0.05
`
	_, err := Parse([]byte(src), "cell.yaml")
	var ce *ConfigErrors
	if !errors.As(err, &ce) {
		t.Fatalf("got %v, want *ConfigErrors", err)
	}
	msg := err.Error()
	for _, want := range []string{
		`policy.rules[0] "slow": scale: must be in [0, 1], got 1.5`,
		`policy.rules[1] "slow": name: duplicate rule name (also rules[0])`,
		`policy.rules[2] "tracking-lost": name: "tracking-lost" is the name of a built-in rule`,
		`policy.rules[3] "nothing": rule has no condition`,
		`policy.rules[4] "odd": level: "stop": want reduce or hold`,
		`policy.rules[5] "holdscale": scale: a hold rule has no speed scale`,
		`policy.max_speed: must be > 0 m/s, got -1 m/s`,
		`robot.frames[0] "tool": quat: not a rotation`,
		`robot.frames[1] "tool": name: duplicate frame name (also frames[0])`,
		`robot.stopping_distance: must be >= 0, got -0.1`,
		`robot.detection_capability: 50 mm: the ISO 13855 formula used here covers d <= 40 mm`,
	} {
		if !strings.Contains(msg, want) {
			t.Errorf("errors lack %q; got:\n%s", want, msg)
		}
	}
	// Every message carries the file and a line.
	for _, e := range *ce {
		if e.File != "cell.yaml" || e.Line < 1 {
			t.Errorf("error without position: %+v", e)
		}
	}
}

func TestPolicyDemoCell(t *testing.T) {
	cfg, err := Load("../testdata/pl3-palletiser.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(cfg.Policy.Rules) != 4 || cfg.Robot.StoppingDistance != 0.20 {
		t.Errorf("policy %+v robot %+v", cfg.Policy, cfg.Robot)
	}
}
