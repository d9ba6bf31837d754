package main

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync/atomic"
	"time"

	"forereach/bus"
	"forereach/report"
	"forereach/review"
	"forereach/safety"
	"forereach/zones"
)

func init() {
	register(&command{
		Name:    "review",
		Summary: "replay recorded sessions: entries and advisory lead times, near misses, false alarms",
		Live:    true,
		Usage: `Usage: forereach review -c CELL.yaml [--as-recorded] [--json] [--html report.html]
                       [--windows N] RECORDING...

Replays recordings of a cell (JSONL recordings of the live service or the
simulator, CSV t,track,x,y,z, C3D) sample by sample through the advisory
engine the live service runs, with the cell's rules, forecast model and
robot states (JSONL robot lines), and reports:

  zone entries      each entry of a hand into a zone's shape, with the lead
                    time of its advisory (from this hand's first reduce or
                    hold request for that zone to the entry) and the time
                    since the cell's advisory left clear; "short" marks a
                    lead below the horizon the cell needs (robot stopping
                    time + system latency)
  missed entries    entries without a request before them
  near misses       approaches closer than policy.near_miss without
                    entering, with the minimum separation
  false alarms      warning episodes of a hand and zone (requests following
                    each other within policy.release) with no entry or near
                    miss of that hand at that zone from their first request
                    to policy.false_alarm_window after their last
  time at level     time at clear, at each reduce scale and at hold
  tracking losses   tracks silent longer than policy.stale_after: last seen,
                    declared lost, regained, and the zone of the fail-safe
                    hold when the hand was near one
  rejected input    lines the live service refused (JSONL reject lines),
                    samples the engine refuses, unreadable lines

Between samples the live service's ticks (bus.tick) are replayed so that
silent tracks are declared lost and advisories released as they were live.

  -c FILE          the cell configuration (required)
  --as-recorded    take the advisories from the recordings' advisory lines
                   (JSONL only) instead of the engine: a hand and zone named
                   by an advisory count as warned until the advisory is clear
                   again, and an entry's lead is the time since the recorded
                   advisory left clear. Entries, near misses and losses still
                   come from replaying the samples.
  --json           print exactly one JSON object (all incidents, SI units,
                   times in seconds on each recording's own axis); the safety
                   notice goes to standard error
  --html FILE      also write a single self-contained HTML report: the tables,
                   a plan and side view of the zones with the hands' paths and
                   the incidents marked, separation against time with the
                   advisory level around the most severe incidents, and a
                   histogram of lead times (inline SVG, no external files)
  --windows N      how many incidents get a separation figure (default 12;
                   the most severe: missed entries, then shortest leads, then
                   closest near misses)
  --units, --markers  how to read CSV and C3D recordings

Text tables list at most 50 rows each; --json lists everything. Memory does
not grow with the length of the recordings. A terminal on standard error
shows progress.

Example:
  forereach review -c testdata/pl3-palletiser.yaml --html review.html recordings/*.jsonl`,
		Run: runReview,
	})
}

func runReview(args []string, stdout, stderr io.Writer) int {
	c := commands["review"]
	fs := newFlagSet(c, stderr)
	rec := addRecordingFlags(fs)
	cellPath := fs.String("c", "", "cell configuration")
	asRecorded := fs.Bool("as-recorded", false, "advisories from the recordings")
	asJSON := fs.Bool("json", false, "one JSON object")
	htmlPath := fs.String("html", "", "HTML report")
	windows := fs.Int("windows", review.DefaultWindows, "incidents with a separation figure")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	usage := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "forereach review: "+format+"\n\n", a...)
		printCommandHelp(stderr, c)
		return 2
	}
	if *cellPath == "" {
		return usage("-c CELL.yaml is required")
	}
	if len(pos) == 0 {
		return usage("no recording given")
	}
	if *windows < 0 || *windows > 200 {
		return usage("--windows %d: want 0 to 200", *windows)
	}
	opt, err := rec.options()
	if err != nil {
		return usage("%v", err)
	}
	for _, p := range pos {
		if *asRecorded && !isJSONL(p) {
			return usage("--as-recorded needs JSONL recordings with advisory lines; %s is not one", p)
		}
	}
	cfg, err := zones.Load(*cellPath)
	if err != nil {
		fmt.Fprintf(stderr, "forereach review: %v\n", err)
		return 1
	}
	model, err := bus.ModelFromConfig(cfg)
	if err != nil {
		fmt.Fprintf(stderr, "forereach review: %s: %v\n", *cellPath, err)
		return 1
	}
	nw := *windows
	if nw == 0 {
		nw = -1
	}
	prog := newRecProgress(stderr, pos)
	rv, err := review.New(cfg, model, review.Options{AsRecorded: *asRecorded, Windows: nw,
		MaxTracks: cfg.Bus.MaxTracks, Progress: prog.items})
	if err != nil {
		fmt.Fprintf(stderr, "forereach review: %v\n", err)
		return 1
	}
	failed := false
	for i, p := range pos {
		err := eachRecording(p, opt, prog, i, func(name string, src review.Source) error {
			return rv.Replay(name, src)
		})
		if err != nil {
			prog.clear()
			fmt.Fprintf(stderr, "forereach review: %v\n", err)
			failed = true
		}
	}
	prog.clear()
	res := rv.Result()
	if *asRecorded {
		for _, r := range res.Recordings {
			if r.Recorded == 0 {
				fmt.Fprintf(stderr, "forereach review: %s has no advisory lines: as recorded, its advisory stayed clear\n", r.Name)
			}
		}
	}
	if *htmlPath != "" {
		if err := writeFile(*htmlPath, func(w io.Writer) error { return report.ReviewHTML(w, cfg, res) }); err != nil {
			fmt.Fprintf(stderr, "forereach review: --html: %v\n", err)
			failed = true
		}
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(res); err != nil {
			fmt.Fprintf(stderr, "forereach review: %v\n", err)
			return 1
		}
		fmt.Fprintf(stderr, "%s\n", safety.Notice)
	} else if err := res.WriteText(stdout); err != nil {
		fmt.Fprintf(stderr, "forereach review: %v\n", err)
		return 1
	}
	if *htmlPath != "" && !failed {
		fmt.Fprintf(stderr, "forereach review: wrote %s\n", *htmlPath)
	}
	if failed {
		return 1
	}
	return 0
}

func isJSONL(path string) bool { return strings.EqualFold(filepath.Ext(path), ".jsonl") }

// eachRecording opens one recording and hands it to use as a review
// source: JSONL files line by line with every line kind (samples, robot
// states, advisories, rejections), other formats through bus.OpenSamples.
func eachRecording(path string, opt bus.OpenOptions, prog *recProgress, index int, use func(name string, src review.Source) error) error {
	prog.start(index)
	if isJSONL(path) {
		f, err := os.Open(path)
		if err != nil {
			return fmt.Errorf("open recording: %w", err)
		}
		defer f.Close()
		return use(path, review.Records(bus.NewRecordReader(prog.reader(f), path)))
	}
	sf, err := bus.OpenSamples(path, opt)
	if err != nil {
		return err
	}
	defer sf.Close()
	err = use(path, review.Samples(sf))
	prog.fileDone(path)
	return err
}

// recProgress shows the progress of reading recordings on stderr when it
// is a terminal: a bar over the bytes of every file (files read through
// bus.OpenSamples count when they are done), the file being read and the
// rate in items per second.
type recProgress struct {
	w     io.Writer
	on    bool
	paths []string
	total int64
	done  atomic.Int64 // bytes of finished files (added on the reading goroutine)
	cur   atomic.Int64 // bytes read of the current file
	file  int
	n     uint64 // items so far in all files
	base  uint64 // items in finished files
	t0    time.Time
	last  time.Time
}

func newRecProgress(stderr io.Writer, paths []string) *recProgress {
	p := &recProgress{w: stderr, on: isTerminal(stderr), paths: paths, t0: time.Now()}
	if !p.on {
		return p
	}
	for _, path := range paths {
		if st, err := os.Stat(path); err == nil {
			p.total += st.Size()
		}
	}
	return p
}

func (p *recProgress) start(index int) {
	if p == nil {
		return
	}
	p.file = index
	p.base = p.n
	p.cur.Store(0)
}

// items is the review's callback: items read so far in this file.
func (p *recProgress) items(n uint64) {
	if p == nil || !p.on {
		return
	}
	p.n = p.base + n
	p.draw(false)
}

func (p *recProgress) fileDone(path string) {
	if p == nil || !p.on {
		return
	}
	if st, err := os.Stat(path); err == nil {
		p.done.Add(st.Size())
	}
	p.cur.Store(0)
	p.draw(true)
}

type countingReader struct {
	r io.Reader
	p *recProgress
}

func (c *countingReader) Read(b []byte) (int, error) {
	n, err := c.r.Read(b)
	c.p.cur.Add(int64(n))
	if err == io.EOF {
		c.p.done.Add(c.p.cur.Swap(0))
	}
	return n, err
}

func (p *recProgress) reader(r io.Reader) io.Reader {
	if p == nil || !p.on {
		return r
	}
	return &countingReader{r: r, p: p}
}

func (p *recProgress) draw(force bool) {
	now := time.Now()
	if !force && now.Sub(p.last) < 150*time.Millisecond {
		return
	}
	p.last = now
	frac := 0.0
	if p.total > 0 {
		frac = float64(p.done.Load()+p.cur.Load()) / float64(p.total)
	}
	frac = min(max(frac, 0), 1)
	const width = 30
	fill := int(frac * width)
	bar := strings.Repeat("#", fill) + strings.Repeat("-", width-fill)
	rate := float64(p.n) / max(now.Sub(p.t0).Seconds(), 1e-3)
	fmt.Fprintf(p.w, "\r\033[K[%s] %3.0f%%  file %d/%d %s  %.2f M lines/s", bar, frac*100, p.file+1, len(p.paths),
		filepath.Base(p.paths[p.file]), rate/1e6)
}

func (p *recProgress) clear() {
	if p != nil && p.on {
		fmt.Fprint(p.w, "\r\033[K")
	}
}
