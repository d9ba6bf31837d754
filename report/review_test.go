package report

import (
	"bytes"
	"encoding/xml"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"forereach/forecast"
	"forereach/review"
	"forereach/safety"
	"forereach/sim"
	"forereach/zones"
)

// simSamples reads a simulated run as a stream of samples.
type simSamples struct{ r *sim.Run }

func (s simSamples) Next() (forecast.Sample, error) {
	m, ok := s.r.Next()
	if !ok {
		return forecast.Sample{}, io.EOF
	}
	return forecast.Sample{Track: m.Track, T: m.T, P: m.P}, nil
}

// plantedReview reviews the planted-incident scenario of testdata/review
// in the example cell (hold forecast, no protective-separation rule, as in
// the review package's tests).
func plantedReview(t *testing.T) (*zones.Config, *review.Result) {
	t.Helper()
	cfg, err := zones.Load(filepath.Join("..", "testdata", "pl3-palletiser.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	cfg.Forecast.Model = forecast.KindHold
	cfg.Robot.Speed = 0
	path := filepath.Join("..", "testdata", "review", "planted.yaml")
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc, err := sim.Load(f, path, cfg)
	if err != nil {
		t.Fatal(err)
	}
	model, err := review.NewModel(cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	rv, err := review.New(cfg, model, review.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if err := rv.Replay("planted", review.Samples(simSamples{sc.Run(7)})); err != nil {
		t.Fatal(err)
	}
	return cfg, rv.Result()
}

// External references an HTML page could load: a src or href pointing to
// http(s), a script with a src, a style sheet link, a CSS import, a CSS
// url() to http(s).
var externalRefs = []*regexp.Regexp{
	regexp.MustCompile(`(?i)\b(src|href)\s*=\s*["']?\s*(https?:)?//`),
	regexp.MustCompile(`(?i)<script\b[^>]*\bsrc\s*=`),
	regexp.MustCompile(`(?i)<link\b`),
	regexp.MustCompile(`(?i)@import`),
	regexp.MustCompile(`(?i)url\(\s*["']?\s*(https?:)?//`),
}

// TestReviewHTMLSelfContained renders the review page of the planted
// scenario and checks that it is one self-contained file: the figures are
// inline SVG that parse as XML, nothing is loaded from elsewhere (the only
// http URLs are the SVG namespace names, which are identifiers, not
// loads), and the safety notice is there.
func TestReviewHTMLSelfContained(t *testing.T) {
	cfg, res := plantedReview(t)
	if len(res.Windows) != 4 {
		t.Fatalf("planted review: %d incident windows, want 4", len(res.Windows))
	}
	var b bytes.Buffer
	if err := ReviewHTML(&b, cfg, res); err != nil {
		t.Fatal(err)
	}
	page := b.String()
	// The patterns do catch what they are for.
	for _, bad := range []string{`<img src="https://example.org/a.png">`, `<script src="a.js"></script>`,
		`<link rel="stylesheet" href="a.css">`, `<style>@import "a.css";</style>`, `background: url(http://example.org/a.png)`,
		`<image xlink:href="//example.org/a.png"/>`} {
		found := false
		for _, re := range externalRefs {
			found = found || re.MatchString(bad)
		}
		if !found {
			t.Errorf("the checks miss %q", bad)
		}
	}
	for _, re := range externalRefs {
		if m := re.FindString(page); m != "" {
			t.Errorf("external reference %q (pattern %s)", m, re)
		}
	}
	ns := regexp.MustCompile(`xmlns(:\w+)?="http://www\.w3\.org/[^"]*"`)
	if rest := ns.ReplaceAllString(page, ""); strings.Contains(rest, "http://") || strings.Contains(rest, "https://") {
		i := strings.Index(rest, "http")
		t.Errorf("an http(s) URL besides the SVG namespaces: …%s…", rest[max(0, i-60):min(len(rest), i+60)])
	}
	svgs := regexp.MustCompile(`(?s)<svg.*?</svg>`).FindAllString(page, -1)
	// plan, one per incident window, lead histogram
	if want := 1 + len(res.Windows) + 1; len(svgs) != want {
		t.Errorf("%d inline SVG figures, want %d", len(svgs), want)
	}
	for i, s := range svgs {
		if err := xml.Unmarshal([]byte(s), new(struct{})); err != nil {
			t.Errorf("figure %d is not well-formed XML: %v", i, err)
		}
	}
	if strings.Contains(page, "<?xml") {
		t.Error("an XML prolog inside the HTML page")
	}
	first := strings.SplitN(safety.Notice, "\n", 2)[0]
	if strings.Count(page, first) < 1 {
		t.Error("no safety notice")
	}
	for _, want := range []string{"missed entry", "near miss", "robot-envelope", "Lead time of 2 warned entries (1 missed)"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
}

// TestMarginSweepFigure draws the sweep figure of the planted scenario
// (constant-velocity forecast) and checks that it is well-formed SVG with
// the zones that have entries in its legend.
func TestMarginSweepFigure(t *testing.T) {
	cfg, _ := plantedReview(t)
	cfg.Forecast.Model = forecast.KindCV
	model, err := review.NewModel(cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	m, err := review.NewMargins(cfg, model, review.MarginOptions{})
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join("..", "testdata", "review", "planted.yaml")
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc, err := sim.Load(f, path, cfg)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.Add("planted", review.Samples(simSamples{sc.Run(7)})); err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := MarginSweepFigure(&b, m.Result()); err != nil {
		t.Fatal(err)
	}
	if err := xml.Unmarshal(b.Bytes(), new(struct{})); err != nil {
		t.Fatalf("not well-formed SVG: %v", err)
	}
	if !strings.Contains(b.String(), "robot-envelope") {
		t.Error("the zone with entries is not in the figure")
	}
}
