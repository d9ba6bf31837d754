package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"golang.org/x/term"

	"forereach/bus"
	"forereach/forecast"
	"forereach/report"
)

func init() {
	register(&command{
		Name:    "eval",
		Summary: "score forecast models on recordings: errors by model and horizon",
		Usage: `Usage: forereach eval [--model hold,cv,ca,kalman-cv,kalman-ca,fitted] [--gains GAINS.yaml]
                     [--horizons 100ms,200ms,300ms] [--json] [--plot errors.svg] FILES...

Runs every model along every track of the recordings (CSV t,track,x,y,z;
JSONL recordings; C3D) as the live service would, sample by sample, and
scores the forecasts against what the hand then did: per model and horizon
the number of forecasts, RMSE, mean, p50/p90/p95/p99 of the 3D error, R² of
the displacement (1 − SSE/SST, SST the spread of the true displacement
about its mean; hold, which predicts no displacement, scores about 0) and
the coverage of the uncertainty radius (the share of errors inside it;
hold, cv and ca have no radius and score 0).

Without --gains the fitted model is fitted on FILES and scored by grouped
cross-validation: each group of files is scored with gains fitted on the
other groups only, never on the files they were fitted on (see --folds).
With --gains the fitted model is the one in the file, scored on FILES as
they are (FILES are then new data).

  --model LIST     models to score (default all). cv and ca take an
                   estimation window: cv@40ms, ca@150ms (default 30ms and
                   100ms); several windows of one kind may be listed.
  --gains FILE     gains file of the fitted model ("default": the gains
                   shipped with forereach)
  --horizons LIST  horizons, whole milliseconds (default 100ms,200ms,300ms)
  --latency D      input latency to compensate: forecasts refer to D after
                   each sample (default 0)
  --coverage P     the probability the uncertainty radius of kalman-cv,
                   kalman-ca and fitted is meant to cover (default 0.95;
                   fitted: between 0.5 and 0.99)
  --folds HOW      cross-validation groups for the fitted model: prefix (the
                   file name up to its first "_", e.g. one group per person
                   for files named <person>_<take>.csv; the default), file
                   (leave one file out) or a number N (N folds of files)
  --gap D          a gap longer than D resets a track (default 250ms)
  --json           print exactly one JSON object on standard output:
                   {"rows":[{"model":…,"horizon_ms":…,"samples":…,"rmse_m":…,
                   "mean_m":…,"p50_m":…,"p90_m":…,"p95_m":…,"p99_m":…,
                   "r2_disp":…,"coverage":…}]} (SI units)
  --plot FILE      write a figure (SVG) of RMSE and p95 against horizon for
                   every model
  --units, --markers  how to read CSV and C3D recordings (see below)

The table is in millimetres. Bad rows are reported on standard error
(file:line:field) and skipped; the rest of the file is used. Progress is
shown on standard error when it is a terminal.

Example:
  forereach eval --horizons 100ms,200ms,300ms,400ms --plot errors.svg ../shared/data/motion/*.csv`,
		Run: runEval,
	})
}

// evalModel is one model to score.
type evalModel struct {
	name string // as shown in the table
	set  forecast.Settings
}

func parseModels(list string) ([]evalModel, error) {
	var out []evalModel
	seen := map[string]bool{}
	for _, item := range strings.Split(list, ",") {
		item = strings.TrimSpace(item)
		if item == "" {
			continue
		}
		kind, win, hasWin := strings.Cut(item, "@")
		s := forecast.Settings{Kind: kind}
		if hasWin {
			if kind != forecast.KindCV && kind != forecast.KindCA {
				return nil, fmt.Errorf("--model: %q: only cv and ca take a window", item)
			}
			d, err := time.ParseDuration(win)
			if err != nil || d <= 0 {
				return nil, fmt.Errorf("--model: %q: %q is not a positive duration", item, win)
			}
			s.Window = d.Seconds()
		}
		if err := s.Check(); err != nil {
			return nil, fmt.Errorf("--model: %q: %v", item, err)
		}
		if seen[item] {
			return nil, fmt.Errorf("--model: %q listed twice", item)
		}
		seen[item] = true
		out = append(out, evalModel{name: item, set: s})
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("--model: no model")
	}
	return out, nil
}

// parseHorizons parses "100ms,200ms" into seconds (whole milliseconds,
// strictly increasing once sorted).
func parseHorizons(list string) ([]float64, error) {
	var hs []float64
	for _, item := range strings.Split(list, ",") {
		item = strings.TrimSpace(item)
		if item == "" {
			continue
		}
		d, err := time.ParseDuration(item)
		if err != nil || d <= 0 || d%time.Millisecond != 0 || d > 10*time.Second {
			return nil, fmt.Errorf("--horizons: %q: want a whole number of milliseconds between 1ms and 10s", item)
		}
		hs = append(hs, d.Seconds())
	}
	if len(hs) == 0 {
		return nil, fmt.Errorf("--horizons: none given")
	}
	sort.Float64s(hs)
	for i := 1; i < len(hs); i++ {
		if hs[i] == hs[i-1] {
			return nil, fmt.Errorf("--horizons: %gms given twice", hs[i]*1000)
		}
	}
	return hs, nil
}

// groupFiles assigns cross-validation groups to files.
func groupFiles(files []forecast.FitFile, how string) error {
	switch how {
	case "prefix", "":
		for i := range files {
			base := strings.TrimSuffix(filepath.Base(files[i].Name), filepath.Ext(files[i].Name))
			g, _, _ := strings.Cut(base, "_")
			files[i].Group = g
		}
	case "file":
		for i := range files {
			files[i].Group = files[i].Name
		}
	default:
		n, err := strconv.Atoi(how)
		if err != nil || n < 2 {
			return fmt.Errorf("--folds: %q: want prefix, file or a number of folds >= 2", how)
		}
		idx := make([]int, len(files))
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return files[idx[a]].Name < files[idx[b]].Name })
		for r, i := range idx {
			files[i].Group = fmt.Sprintf("fold%d", r%n+1)
		}
	}
	return nil
}

// readRecordings reads every file as tracks. Bad rows are reported on
// stderr and skipped; a file that cannot be read is a fatal error.
func readRecordings(paths []string, opt bus.OpenOptions, stderr io.Writer, prog *stderrProgress) ([]forecast.FitFile, error) {
	var files []forecast.FitFile
	for i, p := range paths {
		prog.show("reading", i, len(paths))
		f, err := bus.OpenSamples(p, opt)
		if err != nil {
			return nil, err
		}
		tracks, rowErrs, err := forecast.ReadTracks(f)
		f.Close()
		if err != nil {
			return nil, err
		}
		for j, re := range rowErrs {
			if j == 20 {
				fmt.Fprintf(stderr, "%s: %d more bad rows skipped\n", p, len(rowErrs)-20)
				break
			}
			fmt.Fprintf(stderr, "%v (row skipped)\n", re)
		}
		files = append(files, forecast.FitFile{Name: p, Tracks: tracks})
	}
	prog.done()
	return files, nil
}

// stderrProgress shows a one-line progress indicator on stderr when it is a
// terminal, and nothing otherwise.
type stderrProgress struct {
	w    io.Writer
	on   bool
	last time.Time
}

func newStderrProgress(stderr io.Writer) *stderrProgress {
	f, ok := stderr.(*os.File)
	return &stderrProgress{w: stderr, on: ok && term.IsTerminal(int(f.Fd()))}
}

func (p *stderrProgress) show(stage string, done, total int) {
	if !p.on || time.Since(p.last) < 100*time.Millisecond && done < total {
		return
	}
	p.last = time.Now()
	fmt.Fprintf(p.w, "\r\033[K%s: %d/%d", stage, done, total)
}

func (p *stderrProgress) done() {
	if p.on {
		fmt.Fprint(p.w, "\r\033[K")
	}
}

func runEval(args []string, stdout, stderr io.Writer) int {
	c := commands["eval"]
	fs := newFlagSet(c, stderr)
	rec := addRecordingFlags(fs)
	modelList := fs.String("model", strings.Join(forecast.Kinds, ","), "models to score")
	gainsPath := fs.String("gains", "", "gains file of the fitted model")
	horizonList := fs.String("horizons", "100ms,200ms,300ms", "horizons")
	latency := fs.Duration("latency", 0, "input latency to compensate")
	coverage := fs.Float64("coverage", forecast.DefaultCoverage, "radius coverage")
	folds := fs.String("folds", "prefix", "cross-validation groups: prefix, file or N")
	gap := fs.Duration("gap", 250*time.Millisecond, "gap that resets a track")
	asJSON := fs.Bool("json", false, "print one JSON object")
	plotPath := fs.String("plot", "", "figure of RMSE and p95 against horizon (SVG)")
	paths, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	fail := func(err error) int {
		fmt.Fprintf(stderr, "forereach eval: %v\n", err)
		return 1
	}
	usageErr := func(err error) int {
		fmt.Fprintf(stderr, "forereach eval: %v\n", err)
		return 2
	}
	if len(paths) == 0 {
		return usageErr(errors.New("no recordings given"))
	}
	models, err := parseModels(*modelList)
	if err != nil {
		return usageErr(err)
	}
	hs, err := parseHorizons(*horizonList)
	if err != nil {
		return usageErr(err)
	}
	if *latency < 0 || *latency%time.Millisecond != 0 || *gap <= 0 {
		return usageErr(errors.New("--latency must be a whole number of milliseconds >= 0, and --gap > 0"))
	}
	if !(*coverage > 0 && *coverage < 1) {
		return usageErr(fmt.Errorf("--coverage: %g: must be between 0 and 1", *coverage))
	}
	for i := range models {
		models[i].set.Coverage = *coverage
	}
	opt, err := rec.options()
	if err != nil {
		return usageErr(err)
	}
	var gains *forecast.Gains
	if *gainsPath != "" {
		if gains, err = loadGains(*gainsPath); err != nil {
			return fail(err)
		}
	}
	prog := newStderrProgress(stderr)
	files, err := readRecordings(paths, opt, stderr, prog)
	if err != nil {
		return fail(err)
	}
	if err := groupFiles(files, *folds); err != nil {
		return usageErr(err)
	}
	eo := forecast.EvalOptions{GapReset: gap.Seconds(), Lead: latency.Seconds()}
	ntracks := 0
	for _, f := range files {
		ntracks += len(f.Tracks)
	}
	var rows []forecast.ErrorStats
	for _, m := range models {
		sc := forecast.NewScorer(hs)
		mg := gains
		if m.set.Kind == forecast.KindFitted && gains == nil {
			if countGroups(files) >= 2 {
				g, err := crossValidate(files, hs, eo, *coverage, m.name, stderr, prog)
				if err != nil {
					return fail(err)
				}
				rows = append(rows, g.Stats(m.name)...)
				continue
			}
			// Too few groups to cross-validate: score the shipped gains,
			// unless they were fitted on one of FILES.
			if mg, err = forecast.DefaultGains(); err != nil {
				return fail(err)
			}
			if f := fittedOn(mg, files); f != "" {
				return fail(fmt.Errorf("%s: FILES form one cross-validation group, and the shipped gains were fitted on %s: give files of two groups or more (see --folds), or a gains file not fitted on them (--gains)", m.name, f))
			}
			fmt.Fprintf(stderr, "forereach eval: %s: FILES form one cross-validation group: scoring the shipped gains (fitted on other data) instead\n", m.name)
		}
		{
			m.set.Gains = mg
			model, err := forecast.NewModel(m.set)
			if err != nil {
				return fail(fmt.Errorf("%s: %v", m.name, err))
			}
			done := 0
			for _, f := range files {
				for i := range f.Tracks {
					if err := forecast.ScoreTrack(model, &f.Tracks[i], eo, sc); err != nil {
						return fail(fmt.Errorf("%s: %v", f.Name, err))
					}
					done++
					prog.show(m.name, done, ntracks)
				}
			}
			prog.done()
		}
		rows = append(rows, sc.Stats(m.name)...)
	}
	if *plotPath != "" {
		if err := writeFile(*plotPath, func(w io.Writer) error {
			return report.ErrorsFigure(w, rows, report.ErrorsOptions{Title: fmt.Sprintf("Forecast error by horizon (%d files)", len(files))})
		}); err != nil {
			return fail(err)
		}
	}
	if *asJSON {
		if rows == nil {
			rows = []forecast.ErrorStats{}
		}
		enc := json.NewEncoder(stdout)
		if err := enc.Encode(struct {
			Rows []forecast.ErrorStats `json:"rows"`
		}{rows}); err != nil {
			return fail(err)
		}
		return 0
	}
	printErrorTable(stdout, rows)
	return 0
}

// countGroups returns the number of cross-validation groups among files.
func countGroups(files []forecast.FitFile) int {
	seen := map[string]bool{}
	for _, f := range files {
		seen[f.Group] = true
	}
	return len(seen)
}

// fittedOn returns the first of files (by base name) that g was fitted on,
// or "".
func fittedOn(g *forecast.Gains, files []forecast.FitFile) string {
	used := map[string]bool{}
	for _, f := range g.Fitted.Files {
		used[filepath.Base(f.Name)] = true
	}
	for _, f := range files {
		if used[filepath.Base(f.Name)] {
			return f.Name
		}
	}
	return ""
}

// crossValidate fits the fitted model on files and returns the errors of
// every group under gains fitted without it.
func crossValidate(files []forecast.FitFile, hs []float64, eo forecast.EvalOptions, coverage float64, name string, stderr io.Writer, prog *stderrProgress) (*forecast.Scorer, error) {
	// A forecast at horizon h with lead L is a forecast at lead L+h: fit the
	// leads, then label the rows with the horizons.
	leads := make([]float64, len(hs))
	for i, h := range hs {
		leads[i] = h + eo.Lead
	}
	res, err := forecast.Fit(files, forecast.FitOptions{
		Horizons: leads, GapReset: eo.GapReset, Coverage: coverage,
		Progress: func(stage string, done, total int) { prog.show(name+": "+stage, done, total) },
	})
	prog.done()
	if err != nil {
		return nil, fmt.Errorf("%s: %v", name, err)
	}
	sc := res.CVScorer()
	copy(sc.Horizons, hs)
	return sc, nil
}

func loadGains(path string) (*forecast.Gains, error) {
	if path == "default" {
		return forecast.DefaultGains()
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return forecast.ReadGains(f, path)
}

func printErrorTable(w io.Writer, rows []forecast.ErrorStats) {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "model\thorizon ms\tsamples\tRMSE mm\tmean mm\tp50 mm\tp90 mm\tp95 mm\tp99 mm\tR² disp\tcoverage\t")
	for _, r := range rows {
		fmt.Fprintf(tw, "%s\t%g\t%d\t%.1f\t%.1f\t%.1f\t%.1f\t%.1f\t%.1f\t%.3f\t%.3f\t\n",
			r.Model, r.HorizonMS, r.Samples, r.RMSE*1000, r.Mean*1000, r.P50*1000, r.P90*1000, r.P95*1000, r.P99*1000, r.R2Disp, r.Coverage)
	}
	tw.Flush()
}
