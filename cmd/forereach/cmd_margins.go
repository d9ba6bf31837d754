package main

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

	"forereach/bus"
	"forereach/forecast"
	"forereach/policy"
	"forereach/report"
	"forereach/review"
	"forereach/safety"
	"forereach/zones"
)

func init() {
	register(&command{
		Name:    "margins",
		Summary: "size zone margins from measured forecast error, beside the ISO 13855 and ISO/TS 15066 distances",
		Live:    true,
		Usage: `Usage: forereach margins -c CELL.yaml [--gains FILE] [--target 0.99] [--max 500mm]
                        [--step 5mm] [--json] [--svg sweep.svg] [--yaml zones.yaml]
                        RECORDING...

Sizes each zone's advisory margin from recordings of the cell (JSONL, CSV
t,track,x,y,z, C3D). The horizon the cell needs is H = robot.stopping_time
+ robot.system_latency: a warning must be up at least H before a hand enters
a zone for the robot to be at rest when it arrives. For every zone:

  forecast error   quantiles of the forecast's error at H (the forecast of
                   each sample against where the hand was H later), over
                   the forecasts whose true position was within
                   policy.near_track of the zone
  sweep            for margins from 0 to --max in steps of --step (and the
                   configured margin): the detection rate (entries warned
                   at least H ahead, a warning being the forecast path over
                   H, grown by its uncertainty radius, coming within the
                   margin of the zone, and lasting while warnings follow
                   within policy.release) and the false alarms (warning
                   episodes with no entry or near miss of the same hand
                   within policy.false_alarm_window), per hour of recording
  recommendation   the smallest margin reaching --target detection; for a
                   zone without entries, the error quantile at --target
                   (rounded up to the step)

All margins are computed in one pass over the recordings. Beside them: the
ISO 13855:2010 minimum distance S = K·T + C for a detection zone orthogonal
to the direction of approach (T = H, C = 8·(d − 14 mm) with d =
robot.detection_capability <= 40 mm; K = 2000 mm/s, recalculated with
1600 mm/s when S exceeds 500 mm and then not below 500 mm, never below
100 mm) and the ISO/TS 15066 protective separation distance for the same
stopping data (vh = 1.6 m/s, Tr = robot.reaction_time + system_latency).
The report ends with the zones section of the configuration with the
recommended margins, in the file's units, to replace the file's own.

  -c FILE        the cell configuration (required)
  --gains FILE   forecast with the fitted model and these gains (e.g. from
                 forereach fit) instead of the cell's forecast model
  --target P     detection rate to reach, 0 < P <= 1 (default 0.99)
  --max L        largest margin of the sweep (default 500mm; m, cm or mm)
  --step L       spacing of the margins (default 5mm)
  --rows N       the text sweep tables show every N-th margin (default 4)
  --json         print exactly one JSON object (SI units; the zones section
                 as "zones_yaml"); the safety notice goes to standard error
  --svg FILE     write the sweep figure: detection against margin and
                 against false alarms per hour, per zone
  --yaml FILE    write the zones section with the recommended margins
  --units, --markers  how to read CSV and C3D recordings

Memory does not grow with the length of the recordings. A terminal on
standard error shows progress.

Example:
  forereach margins -c testdata/pl3-palletiser.yaml --svg sweep.svg --yaml zones.yaml recordings/*.jsonl`,
		Run: runMargins,
	})
}

// parseLength reads "500mm", "50cm", "0.5m" or a bare number of metres.
func parseLength(s string) (float64, error) {
	s = strings.TrimSpace(s)
	scale := 1.0
	switch {
	case strings.HasSuffix(s, "mm"):
		s, scale = strings.TrimSuffix(s, "mm"), 0.001
	case strings.HasSuffix(s, "cm"):
		s, scale = strings.TrimSuffix(s, "cm"), 0.01
	case strings.HasSuffix(s, "m"):
		s = strings.TrimSuffix(s, "m")
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil || !(v >= 0) || v > 1e6 {
		return 0, fmt.Errorf("%q is not a length (e.g. 500mm, 0.5m)", s)
	}
	return v * scale, nil
}

func runMargins(args []string, stdout, stderr io.Writer) int {
	c := commands["margins"]
	fs := newFlagSet(c, stderr)
	rec := addRecordingFlags(fs)
	cellPath := fs.String("c", "", "cell configuration")
	gainsPath := fs.String("gains", "", "gains file of the fitted model")
	target := fs.Float64("target", review.DefaultTarget, "detection rate to reach")
	maxStr := fs.String("max", "500mm", "largest margin")
	stepStr := fs.String("step", "5mm", "margin spacing")
	rows := fs.Int("rows", 4, "every N-th margin in the text tables")
	asJSON := fs.Bool("json", false, "one JSON object")
	svgPath := fs.String("svg", "", "sweep figure")
	yamlPath := fs.String("yaml", "", "zones section with the recommended margins")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	usage := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "forereach margins: "+format+"\n\n", a...)
		printCommandHelp(stderr, c)
		return 2
	}
	if *cellPath == "" {
		return usage("-c CELL.yaml is required")
	}
	if len(pos) == 0 {
		return usage("no recording given")
	}
	if !(*target > 0 && *target <= 1) {
		return usage("--target %g: want a rate in (0, 1], e.g. 0.99", *target)
	}
	maxM, err := parseLength(*maxStr)
	if err != nil || maxM <= 0 {
		return usage("--max: %v", orMsg(err, "must be > 0"))
	}
	step, err := parseLength(*stepStr)
	if err != nil || step <= 0 || step > maxM || maxM/step > 10000 {
		return usage("--step: %v", orMsg(err, "must be > 0, at most --max, and give at most 10000 margins"))
	}
	if *rows < 1 {
		return usage("--rows %d: want >= 1", *rows)
	}
	opt, err := rec.options()
	if err != nil {
		return usage("%v", err)
	}
	cfg, err := zones.Load(*cellPath)
	if err != nil {
		fmt.Fprintf(stderr, "forereach margins: %v\n", err)
		return 1
	}
	var model forecast.Model
	if *gainsPath != "" {
		f, err := os.Open(*gainsPath)
		if err != nil {
			fmt.Fprintf(stderr, "forereach margins: --gains: %v\n", err)
			return 1
		}
		g, err := forecast.ReadGains(f, *gainsPath)
		f.Close()
		if err != nil {
			fmt.Fprintf(stderr, "forereach margins: --gains: %v\n", err)
			return 1
		}
		fc := cfg.Forecast
		fc.Model = forecast.KindFitted
		if model, err = forecast.NewModel(policy.ModelSettings(&fc, g)); err != nil {
			fmt.Fprintf(stderr, "forereach margins: --gains: %v\n", err)
			return 1
		}
	} else if model, err = bus.ModelFromConfig(cfg); err != nil {
		fmt.Fprintf(stderr, "forereach margins: %s: %v\n", *cellPath, err)
		return 1
	}
	prog := newRecProgress(stderr, pos)
	mg, err := review.NewMargins(cfg, model, review.MarginOptions{MaxMargin: maxM, Step: step, Target: *target, Progress: prog.items})
	if err != nil {
		fmt.Fprintf(stderr, "forereach margins: %v\n", err)
		return 1
	}
	failed := false
	for i, p := range pos {
		if err := eachRecording(p, opt, prog, i, mg.Add); err != nil {
			prog.clear()
			fmt.Fprintf(stderr, "forereach margins: %v\n", err)
			failed = true
		}
	}
	prog.clear()
	res := mg.Result()
	frag, err := res.ZonesYAML(cfg)
	if err != nil {
		fmt.Fprintf(stderr, "forereach margins: %v\n", err)
		return 1
	}
	if *svgPath != "" {
		if err := writeFile(*svgPath, func(w io.Writer) error { return report.MarginSweepFigure(w, res) }); err != nil {
			fmt.Fprintf(stderr, "forereach margins: --svg: %v\n", err)
			failed = true
		}
	}
	if *yamlPath != "" {
		if err := writeFile(*yamlPath, func(w io.Writer) error { _, err := io.WriteString(w, frag); return err }); err != nil {
			fmt.Fprintf(stderr, "forereach margins: --yaml: %v\n", err)
			failed = true
		}
	}
	if *asJSON {
		out := struct {
			*review.MarginResult
			ZonesYAML string `json:"zones_yaml"`
		}{res, frag}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(out); err != nil {
			fmt.Fprintf(stderr, "forereach margins: %v\n", err)
			return 1
		}
		fmt.Fprintf(stderr, "%s\n", safety.Notice)
	} else if err := res.WriteText(stdout, cfg, *rows); err != nil {
		fmt.Fprintf(stderr, "forereach margins: %v\n", err)
		return 1
	}
	if failed {
		return 1
	}
	return 0
}

func orMsg(err error, msg string) string {
	if err != nil {
		return err.Error()
	}
	return msg
}
