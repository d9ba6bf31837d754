package policy

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// nanModel forecasts NaN positions: a broken forecaster must not make the
// engine report clear, nor put a NaN into an event.
type nanModel struct{}

func (nanModel) Name() string             { return "nan" }
func (nanModel) New() forecast.Forecaster { return &nanForecaster{} }

type nanForecaster struct{ t float64 }

func (f *nanForecaster) Update(t float64, _ r3.Vec) { f.t = t }
func (f *nanForecaster) Reset()                     {}
func (f *nanForecaster) Predict(dst *forecast.Path, h forecast.Horizon) bool {
	dst.Resize(3)
	for k := range dst.T {
		dst.T[k], dst.P[k], dst.R[k] = f.t+float64(k)*h.Step, r3.Vec{X: math.NaN()}, 0
	}
	return true
}

func TestBrokenForecastHolds(t *testing.T) {
	cfg, zs := robotCell(t)
	e, err := NewEngine(cfg, zs, nanModel{}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	e.Sample(forecast.Sample{Track: "op1/right", T: 0, P: r3.Vec{X: -5}})
	a := e.Advisory()
	if a.Level != LevelHold {
		t.Errorf("advisory %v, want hold", a.Level)
	}
	b, err := json.Marshal(e.Events(nil))
	if err != nil {
		t.Fatalf("events do not marshal: %v", err)
	}
	if strings.Contains(string(b), "NaN") || strings.Contains(string(b), "Inf") {
		t.Errorf("events carry a non-finite value: %s", b)
	}
}

func TestMaxTracksAndLatency(t *testing.T) {
	cfg, zs := robotCell(t)
	e, err := NewEngine(cfg, zs, forecastModel(t, forecast.KindCV), Options{MaxTracks: 2})
	if err != nil {
		t.Fatal(err)
	}
	for i, id := range []string{"a", "b", "c", "a"} {
		e.Sample(forecast.Sample{Track: id, T: float64(i), P: r3.Vec{X: -5}})
	}
	if s := e.Stats(); s.Rejected[RejectTooManyTracks] != 1 || s.Accepted != 3 {
		t.Errorf("stats %+v", s)
	}
	for _, v := range []float64{-0.1, math.NaN(), 1.5} {
		if err := e.SetLatency("a", v); err == nil {
			t.Errorf("latency %v accepted", v)
		}
	}
	if err := e.SetLatency("z", 0.01); err == nil {
		t.Errorf("latency for a third track accepted beyond MaxTracks")
	}
	if err := e.SetLatency("", 0.02); err != nil {
		t.Error(err)
	}
}

// TestZoneRules: a zone uses the rules it names; others use all rules. A
// separation rule (sep_below) fires on the measured position.
func TestZoneRules(t *testing.T) {
	cfg := cellConfig()
	sep := zones.Length(0.2)
	cfg.Policy.Rules = []zones.RuleConfig{
		{Name: "close", Level: "reduce", Scale: 0.25, SepBelow: &sep},
		{Name: "inside", Level: "hold", Inside: true},
	}
	a := palletBox()
	a.rules = []string{"inside"}
	b := &dzone{name: "wrapper", sphere: true, c: r3.Vec{X: 0, Y: 3, Z: 1}, r: 0.3}
	e := mustEngine(t, cfg, forecastModel(t, forecast.KindHold), a, b)
	// 0.1 m from the pallet box (only "inside" applies) and 0.1 m from the
	// wrapper sphere (both apply: "close" fires).
	e.Sample(forecast.Sample{Track: "h", T: 0, P: r3.Vec{X: 0.7, Y: 0, Z: 1}})
	if lv := e.Advisory().Level; lv != LevelClear {
		t.Errorf("near the pallet box: %v, want clear (only the inside rule applies)", lv)
	}
	e.Sample(forecast.Sample{Track: "g", T: 0.01, P: r3.Vec{X: 0, Y: 3 - 0.4, Z: 1}})
	adv := e.Advisory()
	if adv.Level != LevelReduce || adv.Scale != 0.25 || len(adv.Reasons) != 1 || adv.Reasons[0].Rule != "close" || adv.Reasons[0].Zone != "wrapper" {
		t.Errorf("near the wrapper: %+v, want reduce 0.25 by close", adv)
	}

	// Unknown rule names and bad rules are refused.
	a.rules = []string{"nope"}
	if _, err := newEngine(cfg, &doubleSet{zs: []*dzone{a}}, forecastModel(t, forecast.KindHold), Options{}); err == nil {
		t.Error("unknown rule accepted")
	}
	a.rules = nil
	cfg.Policy.Rules = []zones.RuleConfig{{Name: "x", Level: "reduce", Scale: 2, Inside: true}}
	if _, err := newEngine(cfg, &doubleSet{zs: []*dzone{a}}, forecastModel(t, forecast.KindHold), Options{}); err == nil {
		t.Error("scale 2 accepted")
	}
	cfg.Policy.Rules = []zones.RuleConfig{{Name: RuleTrackingLost, Level: "hold", Inside: true}}
	if _, err := newEngine(cfg, &doubleSet{zs: []*dzone{a}}, forecastModel(t, forecast.KindHold), Options{}); err == nil {
		t.Error("built-in rule name accepted")
	}
}

func TestLevelText(t *testing.T) {
	for _, l := range []Level{LevelClear, LevelReduce, LevelHold} {
		b, err := l.MarshalText()
		if err != nil {
			t.Fatal(err)
		}
		var back Level
		if err := back.UnmarshalText(b); err != nil || back != l {
			t.Errorf("%v: round trip gave %v, %v", l, back, err)
		}
	}
	if got := []string{LevelClear.String(), LevelReduce.String(), LevelHold.String()}; strings.Join(got, ",") != "clear,reduce,hold" {
		t.Errorf("level names %v", got)
	}
	var l Level
	if err := l.UnmarshalText([]byte("stop")); err == nil {
		t.Error(`"stop" parsed as a level`)
	}
	if _, err := Level(7).MarshalText(); err == nil {
		t.Error("level 7 marshalled")
	}
}
