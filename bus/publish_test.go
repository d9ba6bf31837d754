package bus

import (
	"testing"
	"time"

	"forereach/forecast"

	"gonum.org/v1/gonum/spatial/r3"
)

// TestPublisherRoundTrip: what a Publisher sends over real TCP through the
// embedded broker is decoded by the service's own decoders to the same
// sample and robot state, in order.
func TestPublisherRoundTrip(t *testing.T) {
	b := startBroker(t)
	sub := newTestClient(t, b.URL(), "sub", "src/#")
	p, err := DialPublisher(b.Addr(), "pub") // host:port means tcp
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	const n = 50
	for i := 0; i < n; i++ {
		s := SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: 100 + float64(i)/100, P: r3.Vec{X: 1, Y: float64(i) / 1000, Z: -0.25}}}
		if err := p.Sample("src/hands", &s); err != nil {
			t.Fatal(err)
		}
	}
	speed, stop := 0.8, 0.35
	st := RobotState{T: 101, Frames: []FramePos{{Name: "tool", Pos: [3]float64{3, 3.4, 2.1}, Quat: [4]float64{0, 1, 0, 0}}}, Speed: &speed, StopTime: &stop}
	if err := p.Robot("src/robot", &st); err != nil {
		t.Fatal(err)
	}
	if err := p.Flush(5 * time.Second); err != nil {
		t.Fatal(err)
	}
	sub.waitFor(t, "samples and robot state", 10*time.Second, func() bool {
		return len(sub.messages("src/hands")) == n && len(sub.messages("src/robot")) == 1
	})
	var d SampleDecoder
	for i, m := range sub.messages("src/hands") {
		got, errs := d.Decode(m.topic, m.payload)
		want := forecast.Sample{Track: "op1/right", T: 100 + float64(i)/100, P: r3.Vec{X: 1, Y: float64(i) / 1000, Z: -0.25}}
		if len(errs) != 0 || len(got) != 1 || got[0].Sample != want {
			t.Fatalf("sample %d: got %+v (%v), want %+v", i, got, errs, want)
		}
	}
	rs, perr := DecodeRobot("src/robot", sub.messages("src/robot")[0].payload, 0)
	if perr != nil || rs.T != 101 || len(rs.Frames) != 1 || rs.Frames[0] != st.Frames[0] ||
		rs.Speed == nil || *rs.Speed != speed || rs.StopTime == nil || *rs.StopTime != stop || rs.StopDist != nil {
		t.Fatalf("robot state: got %+v (%v)", rs, perr)
	}
}
