package forecast

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
)

// loadMotionFiles reads ../shared/data/motion as FitFiles grouped by person:
// the CMU subject (file name up to "_": 01, 05, 131) and the KTH handover
// pair as its own group.
func loadMotionFiles(t testing.TB) []FitFile {
	dir := motionDir(t)
	paths, _ := filepath.Glob(filepath.Join(dir, "*.csv"))
	sort.Strings(paths)
	var files []FitFile
	for _, p := range paths {
		fh, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		trs, rows, err := ReadTracks(NewCSVReader(fh, p, 1))
		fh.Close()
		if err != nil || len(rows) > 0 {
			t.Fatalf("%s: %v %v", p, rows, err)
		}
		g, _, _ := strings.Cut(filepath.Base(p), "_")
		files = append(files, FitFile{Name: filepath.Base(p), Group: g, Tracks: trs})
	}
	if len(files) != 19 {
		t.Fatalf("motion data: %d files, its README lists 19", len(files))
	}
	return files
}

func scoreFiles(t testing.TB, m Model, files []FitFile, hs []float64) map[string]*Scorer {
	out := map[string]*Scorer{"all": NewScorer(hs)}
	for _, f := range files {
		if out[f.Group] == nil {
			out[f.Group] = NewScorer(hs)
		}
		for i := range f.Tracks {
			s := NewScorer(hs)
			if err := ScoreTrack(m, &f.Tracks[i], EvalOptions{}, s); err != nil {
				t.Fatal(err)
			}
			out[f.Group].Merge(s)
			out["all"].Merge(s)
		}
	}
	return out
}

// On real recorded human wrists (../shared/data/motion: CMU subjects 1, 5
// and 131, and the KTH handover pair; see its README), with leave-one-
// person-out cross-validation, the fitted model beats the best classical
// baseline (hold, or cv/ca at the best of a search over estimation windows)
// by the required ratios, overall and in each group, and its 95% radius
// covers 93–97% of the errors. It also checks that the shipped default gains
// are what this data and code give.
func TestFittedOnMotionLeaveOnePersonOut(t *testing.T) {
	files := loadMotionFiles(t)
	hs := []float64{0.1, 0.3}
	res, err := Fit(files, FitOptions{Horizons: hs})
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(res.Groups, ",") != "01,05,131,kth" {
		t.Fatalf("groups %v", res.Groups)
	}
	fitted := map[string][]ErrorStats{"all": res.CVScorer().Stats(KindFitted)}
	for _, g := range res.Groups {
		fitted[g] = res.CV[g].Stats(KindFitted)
	}
	// Best classical baseline per group and horizon over a window search.
	cands := []Settings{{Kind: KindHold}}
	for _, w := range []float64{0.01, 0.02, 0.03, 0.04, 0.05, 0.075, 0.1} {
		cands = append(cands, Settings{Kind: KindCV, Window: w})
	}
	for _, w := range []float64{0.05, 0.075, 0.1, 0.15, 0.2, 0.3} {
		cands = append(cands, Settings{Kind: KindCA, Window: w})
	}
	best := map[string][]float64{}
	bestName := map[string][]string{}
	for _, s := range cands {
		for g, sc := range scoreFiles(t, mustModel(t, s), files, hs) {
			if best[g] == nil {
				best[g] = []float64{1e9, 1e9}
				bestName[g] = make([]string, 2)
			}
			for k, r := range sc.Stats("") {
				if r.RMSE < best[g][k] {
					best[g][k] = r.RMSE
					bestName[g][k] = s.Kind
					if s.Kind != KindHold {
						bestName[g][k] = fmt.Sprintf("%s@%gms", s.Kind, s.Window*1000)
					}
				}
			}
		}
	}
	// Required: overall ratio at 300 ms <= 0.80, at 100 ms <= 0.92 (the
	// issue's acceptance figures); in every person group the fitted model is
	// no worse than the group's own best classical baseline.
	limits := []float64{0.92, 0.80}
	for _, g := range []string{"all", "01", "05", "131", "kth"} {
		for k, h := range hs {
			r := fitted[g][k]
			ratio := r.RMSE / best[g][k]
			t.Logf("%-4s %3.0f ms: fitted RMSE %6.1f mm, best classical %6.1f mm (%s), ratio %.3f, coverage %.3f",
				g, h*1000, r.RMSE*1000, best[g][k]*1000, bestName[g][k], ratio, r.Coverage)
			limit := 1.0
			if g == "all" {
				limit = limits[k]
			}
			if ratio > limit {
				t.Errorf("%s at %g ms: fitted/best classical = %.3f, want <= %.2f", g, h*1000, ratio, limit)
			}
			lo, hi := 0.93, 0.97
			if g != "all" {
				lo, hi = 0.90, 0.99 // per group: fewer samples, looser band
			}
			if r.Coverage < lo || r.Coverage > hi {
				t.Errorf("%s at %g ms: coverage of the 95%% radius %.3f, want %.2f–%.2f", g, h*1000, r.Coverage, lo, hi)
			}
		}
	}
	// The shipped default gains come from this data: a fit at the same
	// horizons reproduces them (horizons are fitted independently).
	def, err := DefaultGains()
	if err != nil {
		t.Fatal(err)
	}
	if len(def.Fitted.Files) != len(files) {
		t.Fatalf("default gains fitted on %d files, the motion folder has %d", len(def.Fitted.Files), len(files))
	}
	for k, h := range hs {
		var dh *HorizonGains
		for i := range def.Horizons {
			if def.Horizons[i].MS == h*1000 {
				dh = &def.Horizons[i]
			}
		}
		if dh == nil {
			t.Fatalf("default gains have no %g ms horizon", h*1000)
		}
		got := res.Gains.Horizons[k]
		for j := range got.Gains {
			if d := got.Gains[j] - dh.Gains[j]; d*d > 1e-18 {
				t.Errorf("%g ms gain %d: refit %g, shipped %g", h*1000, j, got.Gains[j], dh.Gains[j])
			}
		}
		if d := got.CV.RMSE - dh.CV.RMSE; d*d > 1e-18 {
			t.Errorf("%g ms: cross-validated RMSE refit %g, shipped %g", h*1000, got.CV.RMSE, dh.CV.RMSE)
		}
	}
}
