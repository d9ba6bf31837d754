package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"golang.org/x/term"

	"forereach/bus"
	"forereach/forecast"
	"forereach/sim"
	"forereach/zones"
)

func init() {
	register(&command{
		Name:    "simulate",
		Summary: "simulate operators' hands from a scenario: recordings, randomised runs, or live samples",
		Usage: `Usage: forereach simulate -s SCENARIO.yaml [-c CELL.yaml] (-o FILE | --publish BROKER)
                          [--seed N] [--runs N] [--speed X] [--truth FILE] [--summary FILE]

Simulates the operators of a scenario (minimum-jerk reaches, walking
approaches, sweeps, pick-and-place cycles, pauses) as a hand tracker would
have delivered them (frame rate, noise, dropouts, occlusion, latency,
jitter, outliers), on the scenario's own time axis from 0 s.

  -o FILE         write a recording: FILE.csv (t,track,x,y,z) or FILE.jsonl
                  (forereach's JSONL recording: "arrival" is the simulated
                  arrival time on the same axis as "t"); "-" writes CSV to
                  standard output. Samples are in arrival order.
  --publish URL   publish the samples to an MQTT broker (tcp://host:port or
                  host:port) as single-sample payloads, paced by their
                  simulated arrival times; source times are the Unix time at
                  the start plus the simulated time.
  --topic T       topic to publish on (default: the cell's samples topic
                  without its wildcard, e.g. forereach/pl3-palletiser/hands)
  --speed X       pace publishing X times faster than real time (default 1;
                  0: as fast as possible)
  -c CELL.yaml    the cell: its stations are targets, and its fixed zones
                  give the ground truth (entries, near passes)
  --seed N        seed (default: the scenario's seed); the same seed gives
                  byte-identical output
  --runs N        N randomised runs: FILE becomes FILE-000.csv, FILE-001.csv,
                  ...; run i is the same for the same seed whatever N is
  --near D        near-pass distance in metres for the ground truth
                  (default: the cell's policy.near_miss, else 0.1)
  --truth FILE    write the ground truth of each run as JSON (movement
                  times, planted losses, zone entries, near passes, closest
                  approaches); with --runs, FILE-000.json, ...
  --summary FILE  write the per-run summary as CSV as well

A summary (per run: duration, samples, dropouts, occlusions, planted
losses, outliers, and with -c the zone entries and near passes) is printed
to standard output, or to standard error when the recording goes there.

Examples:
  forereach simulate -s testdata/scenarios/demo.yaml -c testdata/pl3-palletiser.yaml -o demo.jsonl
  forereach simulate -s testdata/scenarios/infeed-clearing.yaml -c testdata/pl3-palletiser.yaml \
      -o runs/clearing.csv --runs 200 --seed 7 --summary runs/summary.csv
  forereach simulate -s testdata/scenarios/demo.yaml -c testdata/pl3-palletiser.yaml \
      --publish tcp://127.0.0.1:1883`,
		Live: true,
		Run:  runSimulate,
	})
}

type simulateFlags struct {
	scenario, cell, out, publish, topic, truth, summary string
	seed                                                string
	runs                                                int
	speed, near                                         float64
}

func runSimulate(args []string, stdout, stderr io.Writer) int {
	c := commands["simulate"]
	fs := newFlagSet(c, stderr)
	var f simulateFlags
	fs.StringVar(&f.scenario, "s", "", "scenario file (YAML)")
	fs.StringVar(&f.cell, "c", "", "cell configuration file (YAML)")
	fs.StringVar(&f.out, "o", "", "output recording (.csv or .jsonl; - for CSV on standard output)")
	fs.StringVar(&f.publish, "publish", "", "MQTT broker to publish to")
	fs.StringVar(&f.topic, "topic", "", "topic to publish on")
	fs.StringVar(&f.seed, "seed", "", "seed (default: the scenario's)")
	fs.IntVar(&f.runs, "runs", 1, "number of randomised runs")
	fs.Float64Var(&f.speed, "speed", 1, "publishing pace: times real time (0: as fast as possible)")
	fs.Float64Var(&f.near, "near", math.NaN(), "near-pass distance, metres")
	fs.StringVar(&f.truth, "truth", "", "ground-truth output (JSON)")
	fs.StringVar(&f.summary, "summary", "", "per-run summary output (CSV)")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	usageErr := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "forereach simulate: "+format+"\n", a...)
		fmt.Fprintln(stderr, "run 'forereach help simulate' for usage")
		return 2
	}
	switch {
	case len(pos) > 0:
		return usageErr("unexpected argument %q", pos[0])
	case f.scenario == "":
		return usageErr("-s SCENARIO.yaml is required")
	case f.out == "" && f.publish == "":
		return usageErr("give -o FILE or --publish BROKER")
	case f.out != "" && f.publish != "":
		return usageErr("give -o FILE or --publish BROKER, not both")
	case f.runs < 1:
		return usageErr("--runs must be at least 1, got %d", f.runs)
	case f.publish != "" && f.runs > 1:
		return usageErr("--publish plays one run; --runs is for recordings")
	case !(f.speed >= 0) || math.IsInf(f.speed, 0):
		return usageErr("--speed must be a number >= 0, got %g", f.speed)
	case !math.IsNaN(f.near) && !(f.near >= 0 && f.near <= 10):
		return usageErr("--near must be in [0, 10] m, got %g", f.near)
	case f.out == "-" && f.runs > 1:
		return usageErr("-o - writes one run; give a file name for --runs")
	}
	if f.out != "" && f.out != "-" {
		if ext := strings.ToLower(filepath.Ext(f.out)); ext != ".csv" && ext != ".jsonl" {
			return usageErr("-o %s: unknown recording type %q (want .csv or .jsonl)", f.out, ext)
		}
	}
	if f.truth != "" && strings.ToLower(filepath.Ext(f.truth)) != ".json" {
		return usageErr("--truth %s: want a .json file", f.truth)
	}

	var seed uint64
	if f.seed != "" {
		if seed, err = strconv.ParseUint(f.seed, 10, 64); err != nil {
			return usageErr("--seed: %q is not a whole number >= 0", f.seed)
		}
	}

	var cell *zones.Config
	if f.cell != "" {
		if cell, err = zones.Load(f.cell); err != nil {
			fmt.Fprintln(stderr, err)
			return 1
		}
	}
	sf, err := os.Open(f.scenario)
	if err != nil {
		fmt.Fprintf(stderr, "forereach simulate: %v\n", err)
		return 1
	}
	sc, err := sim.Load(sf, f.scenario, cell)
	sf.Close()
	if err != nil {
		fmt.Fprintln(stderr, err)
		return 1
	}
	if f.seed == "" {
		seed = sc.Seed
	}
	near := f.near
	if math.IsNaN(near) {
		near = 0.1
		if cell != nil && cell.Policy.NearMiss > 0 {
			near = float64(cell.Policy.NearMiss)
		}
	}
	var zs []sim.Zone
	if cell != nil {
		set, err := cell.BuildZones()
		if err != nil {
			fmt.Fprintf(stderr, "forereach simulate: %s: %v\n", f.cell, err)
			return 1
		}
		zs = sim.FixedZones(set)
	}

	if f.publish != "" {
		return simulatePublish(sc, cell, seed, &f, zs, near, stdout, stderr)
	}

	report := stdout
	if f.out == "-" {
		report = stderr
	}
	progress := isTerminal(stderr) && f.runs > 1
	var rows []runSummary
	for i := 0; i < f.runs; i++ {
		r := sc.RunN(seed, i)
		out := numbered(f.out, i, f.runs)
		if err := writeRecording(r, out, sc, cell, stdout); err != nil {
			fmt.Fprintf(stderr, "forereach simulate: %v\n", err)
			return 1
		}
		row := summarise(r, out, zs, near)
		if f.truth != "" {
			if err := writeTruth(numbered(f.truth, i, f.runs), sc, r, row.truth); err != nil {
				fmt.Fprintf(stderr, "forereach simulate: %v\n", err)
				return 1
			}
		}
		rows = append(rows, row)
		if progress {
			fmt.Fprintf(stderr, "\rrun %d of %d", i+1, f.runs)
		}
	}
	if progress {
		fmt.Fprintln(stderr)
	}
	printSummary(report, sc, seed, rows, zs, near)
	if f.summary != "" {
		if err := writeSummaryCSV(f.summary, rows, zs); err != nil {
			fmt.Fprintf(stderr, "forereach simulate: %v\n", err)
			return 1
		}
	}
	return 0
}

// numbered returns path for a single run, and path with "-NNN" before its
// extension for run i of several.
func numbered(path string, i, runs int) string {
	if runs == 1 || path == "" {
		return path
	}
	ext := filepath.Ext(path)
	return fmt.Sprintf("%s-%03d%s", strings.TrimSuffix(path, ext), i, ext)
}

func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

// writeRecording streams run r into path (CSV or JSONL by extension; "-":
// CSV on stdout).
func writeRecording(r *sim.Run, path string, sc *sim.Scenario, cell *zones.Config, stdout io.Writer) (err error) {
	var w io.Writer = stdout
	if path != "-" {
		if dir := filepath.Dir(path); dir != "." {
			if err := os.MkdirAll(dir, 0o755); err != nil {
				return err
			}
		}
		f, err := os.Create(path)
		if err != nil {
			return err
		}
		defer func() {
			if e := f.Close(); e != nil && err == nil {
				err = e
			}
		}()
		w = f
	}
	if path == "-" || strings.EqualFold(filepath.Ext(path), ".csv") {
		cw := sim.NewCSVWriter(w)
		for {
			m, ok := r.Next()
			if !ok {
				break
			}
			if err := cw.Write(&m); err != nil {
				return fmt.Errorf("%s: %w", path, err)
			}
		}
		if err := cw.Flush(); err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
		return nil
	}
	h := bus.Header{Cell: sc.Cell, Version: version,
		Source: fmt.Sprintf("simulate %s seed %d run %d", filepath.Base(sc.Source), r.Seed, r.Index)}
	if cell != nil {
		h.Cell, h.ConfigDigest = cell.Cell, cell.Digest
	}
	rec, err := bus.NewRecorder(w, h)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	for {
		m, ok := r.Next()
		if !ok {
			break
		}
		s := bus.SampleRecord{Sample: forecast.Sample{Track: m.Track, T: m.T, P: m.P}, Arrival: m.Arrival}
		if err := rec.Sample(&s); err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
	}
	if err := rec.Close(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}

// runSummary is one line of the summary.
type runSummary struct {
	file     string
	index    int
	duration float64
	counts   sim.Counts
	truth    sim.Truth
	entries  []int // per zone: entries of any hand
	near     []int // per zone: near passes
}

func summarise(r *sim.Run, file string, zs []sim.Zone, near float64) runSummary {
	_, c := r.Counts()
	s := runSummary{file: file, index: r.Index, duration: r.Duration(), counts: c,
		entries: make([]int, len(zs)), near: make([]int, len(zs))}
	if len(zs) > 0 {
		s.truth = r.Truth(zs, near)
		idx := map[string]int{}
		for i, z := range zs {
			idx[z.Name] = i
		}
		for _, e := range s.truth.Entries {
			s.entries[idx[e.Zone]]++
		}
		for _, n := range s.truth.NearPasses {
			s.near[idx[n.Zone]]++
		}
	}
	return s
}

func printSummary(w io.Writer, sc *sim.Scenario, seed uint64, rows []runSummary, zs []sim.Zone, near float64) {
	fmt.Fprintf(w, "scenario %s, seed %d, %d run(s)\n", sc.Name, seed, len(rows))
	tw := tabwriter.NewWriter(w, 2, 8, 2, ' ', tabwriter.AlignRight)
	fmt.Fprint(tw, "run\tduration s\tframes\tsamples\tdropped\toccluded\tlost\toutliers\t")
	if len(zs) > 0 {
		fmt.Fprint(tw, "entries\tnear passes\t")
	}
	fmt.Fprintln(tw)
	for _, r := range rows {
		c := r.counts
		fmt.Fprintf(tw, "%d\t%.2f\t%d\t%d\t%d\t%d\t%d\t%d\t", r.index, r.duration, c.Frames, c.Delivered, c.Dropped, c.Occluded, c.Lost, c.Outliers)
		if len(zs) > 0 {
			fmt.Fprintf(tw, "%d\t%d\t", sum(r.entries), sum(r.near))
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
	if len(zs) == 0 {
		return
	}
	// Per zone over all runs: how many runs entered, came near, and the
	// distribution of the closest approach.
	fmt.Fprintf(w, "\nper zone over %d run(s) (near pass: within %.3g m without entering; closest: of any hand, negative inside)\n", len(rows), near)
	tw = tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)
	fmt.Fprintln(tw, "zone\truns entered\truns near\tentries\tclosest min m\tclosest median m")
	for i, z := range zs {
		var entered, nearRuns, entries int
		closest := make([]float64, 0, len(rows))
		for _, r := range rows {
			if r.entries[i] > 0 {
				entered++
			}
			if r.near[i] > 0 {
				nearRuns++
			}
			entries += r.entries[i]
			closest = append(closest, r.truth.Closest[i].Dist)
		}
		sort.Float64s(closest)
		med := closest[len(closest)/2]
		if len(closest)%2 == 0 {
			med = (closest[len(closest)/2-1] + closest[len(closest)/2]) / 2
		}
		fmt.Fprintf(tw, "%s\t%d\t%d\t%d\t%.3f\t%.3f\n", z.Name, entered, nearRuns, entries, closest[0], med)
	}
	tw.Flush()
}

func sum(xs []int) int {
	n := 0
	for _, x := range xs {
		n += x
	}
	return n
}

func writeSummaryCSV(path string, rows []runSummary, zs []sim.Zone) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriter(f)
	fmt.Fprint(w, "run,file,duration,frames,samples,dropped,occluded,lost,outliers")
	for _, z := range zs {
		fmt.Fprintf(w, ",%s_entries,%s_near,%s_closest", z.Name, z.Name, z.Name)
	}
	fmt.Fprintln(w)
	for _, r := range rows {
		c := r.counts
		fmt.Fprintf(w, "%d,%s,%s,%d,%d,%d,%d,%d,%d", r.index, r.file, ftoa(r.duration), c.Frames, c.Delivered, c.Dropped, c.Occluded, c.Lost, c.Outliers)
		for i := range zs {
			fmt.Fprintf(w, ",%d,%d,%s", r.entries[i], r.near[i], ftoa(r.truth.Closest[i].Dist))
		}
		fmt.Fprintln(w)
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

func ftoa(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }

// The ground-truth file.
type truthFile struct {
	Scenario   string         `json:"scenario"`
	Seed       uint64         `json:"seed"`
	Run        int            `json:"run"`
	Duration   float64        `json:"duration"`
	Tracks     []string       `json:"tracks"`
	Actions    []truthAction  `json:"actions"`
	Losses     []truthLoss    `json:"losses"`
	Entries    []truthEntry   `json:"entries"`
	NearPasses []truthNear    `json:"near_passes"`
	Closest    []truthClosest `json:"closest"`
	Counts     truthCounts    `json:"counts"`
}

type truthAction struct {
	Operator string     `json:"operator"`
	Track    string     `json:"track,omitempty"`
	Kind     string     `json:"kind"`
	Label    string     `json:"label,omitempty"`
	Step     int        `json:"step"`
	Cycle    int        `json:"cycle,omitempty"`
	Start    float64    `json:"start"`
	End      float64    `json:"end"`
	From     [3]float64 `json:"from"`
	To       [3]float64 `json:"to"`
}

type truthLoss struct {
	Track string  `json:"track"`
	Start float64 `json:"start"`
	End   float64 `json:"end"`
}

type truthEntry struct {
	Track string  `json:"track"`
	Zone  string  `json:"zone"`
	Enter float64 `json:"enter"`
	Exit  float64 `json:"exit"`
	Open  bool    `json:"open,omitempty"`
	Depth float64 `json:"depth"`
}

type truthNear struct {
	Track string  `json:"track"`
	Zone  string  `json:"zone"`
	Start float64 `json:"start"`
	End   float64 `json:"end"`
	T     float64 `json:"t"`
	Dist  float64 `json:"dist"`
}

type truthClosest struct {
	Track string  `json:"track"`
	Zone  string  `json:"zone"`
	T     float64 `json:"t"`
	Dist  float64 `json:"dist"`
}

type truthCounts struct {
	Frames    int `json:"frames"`
	Delivered int `json:"delivered"`
	Dropped   int `json:"dropped"`
	Occluded  int `json:"occluded"`
	Lost      int `json:"lost"`
	Outliers  int `json:"outliers"`
}

func writeTruth(path string, sc *sim.Scenario, r *sim.Run, tr sim.Truth) error {
	_, c := r.Counts()
	out := truthFile{Scenario: sc.Name, Seed: r.Seed, Run: r.Index, Duration: r.Duration(), Tracks: r.Tracks(),
		Actions: []truthAction{}, Losses: []truthLoss{}, Entries: []truthEntry{}, NearPasses: []truthNear{}, Closest: []truthClosest{},
		Counts: truthCounts{c.Frames, c.Delivered, c.Dropped, c.Occluded, c.Lost, c.Outliers}}
	for _, a := range r.Actions() {
		out.Actions = append(out.Actions, truthAction{a.Operator, a.Track, a.Kind, a.Label, a.Step, a.Cycle, a.Start, a.End,
			[3]float64{a.From.X, a.From.Y, a.From.Z}, [3]float64{a.To.X, a.To.Y, a.To.Z}})
	}
	for _, l := range r.Losses() {
		out.Losses = append(out.Losses, truthLoss(l))
	}
	for _, e := range tr.Entries {
		out.Entries = append(out.Entries, truthEntry{e.Track, e.Zone, e.Enter, e.Exit, e.Open, e.Depth})
	}
	for _, n := range tr.NearPasses {
		out.NearPasses = append(out.NearPasses, truthNear{n.Track, n.Zone, n.Start, n.End, n.T, n.Dist})
	}
	for _, a := range tr.Closest {
		if !math.IsInf(a.Dist, 0) {
			out.Closest = append(out.Closest, truthClosest(a))
		}
	}
	b, err := json.MarshalIndent(out, "", "  ")
	if err != nil {
		return err
	}
	if dir := filepath.Dir(path); dir != "." {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return err
		}
	}
	return os.WriteFile(path, append(b, '\n'), 0o644)
}

// simulatePublish plays one run onto an MQTT broker, paced by the
// simulated arrival times.
func simulatePublish(sc *sim.Scenario, cell *zones.Config, seed uint64, f *simulateFlags, zs []sim.Zone, near float64, stdout, stderr io.Writer) int {
	topic := f.topic
	if topic == "" {
		cellName := sc.Cell
		t := zones.TopicsConfig{}
		if cell != nil {
			cellName, t = cell.Cell, cell.Bus.Topics
		}
		if t.Prefix == "" {
			t.Prefix = zones.DefaultTopicPrefix
		}
		if t.Samples == "" {
			t.Samples = "{prefix}/hands/#"
		}
		if cellName == "" {
			fmt.Fprintln(stderr, "forereach simulate: no cell name for the topic: give -c CELL.yaml, a cell in the scenario, or --topic")
			return 2
		}
		topic = strings.TrimSuffix(strings.TrimSuffix(t.Topic(cellName, t.Samples), "#"), "/")
	}
	if topic == "" || strings.ContainsAny(topic, "+#") {
		fmt.Fprintf(stderr, "forereach simulate: cannot publish on %q (a topic filter): give --topic\n", topic)
		return 2
	}
	pub, err := bus.DialPublisher(f.publish, "forereach-simulate-"+strconv.Itoa(os.Getpid()))
	if err != nil {
		fmt.Fprintf(stderr, "forereach simulate: %v\n", err)
		return 1
	}
	defer pub.Close()

	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	r := sc.Run(seed)
	start := time.Now()
	base := float64(start.UnixNano()) / 1e9
	progress := isTerminal(stderr)
	n := 0
	lastShown := time.Time{}
	for {
		m, ok := r.Next()
		if !ok {
			break
		}
		if f.speed > 0 {
			due := start.Add(time.Duration(m.Arrival / f.speed * float64(time.Second)))
			if d := time.Until(due); d > 0 {
				select {
				case <-ctx.Done():
					fmt.Fprintf(stderr, "\nforereach simulate: interrupted after %d samples\n", n)
					return 1
				case <-time.After(d):
				}
			}
		} else if ctx.Err() != nil {
			fmt.Fprintf(stderr, "\nforereach simulate: interrupted after %d samples\n", n)
			return 1
		}
		s := bus.SampleRecord{Sample: forecast.Sample{Track: m.Track, T: base + m.T, P: m.P}}
		if err := pub.Sample(topic, &s); err != nil {
			fmt.Fprintf(stderr, "forereach simulate: publishing on %s: %v\n", topic, err)
			return 1
		}
		n++
		if progress && time.Since(lastShown) > 200*time.Millisecond {
			lastShown = time.Now()
			fmt.Fprintf(stderr, "\r%s: %d samples, t = %.1f of %.1f s", topic, n, m.T, r.Duration())
		}
	}
	if err := pub.Flush(5 * time.Second); err != nil {
		fmt.Fprintf(stderr, "forereach simulate: %v\n", err)
		return 1
	}
	if progress {
		fmt.Fprintln(stderr)
	}
	printSummary(stdout, sc, seed, []runSummary{summarise(r, topic, zs, near)}, zs, near)
	return 0
}
