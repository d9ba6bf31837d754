package main

import (
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"forereach/forecast"
)

func init() {
	register(&command{
		Name:    "fit",
		Summary: "fit the fitted model's per-horizon gains on recordings, with cross-validated errors",
		Usage: `Usage: forereach fit [--horizons 50ms,100ms,...,500ms] [--out gains.yaml] FILES...

Fits the fitted forecast model on the recordings: for each horizon, the
displacement of the hand is a linear combination of kinematic terms (see
forecast.FeatureSet), with one set of gains per horizon, fitted by ridge
least squares. The uncertainty radius is a scale (from the hand's recent
speed, acceleration and change of velocity, and the tracker's noise) times
the quantiles of the error seen in cross-validation.

The gains file (YAML) records what it was fitted on (files, sample rate,
horizons, date), the gains, and per horizon the errors seen in grouped
cross-validation: each group of files scored with gains fitted on the other
groups only. A summary of those errors is printed on standard output.

  --horizons LIST  horizons, whole milliseconds (default 50ms to 500ms in
                   steps of 50ms)
  --out FILE       the gains file to write (default gains.yaml; "-":
                   standard output, and the summary goes to standard error)
  --folds HOW      cross-validation groups: prefix (the file name up to its
                   first "_", e.g. one group per person for files named
                   <person>_<take>.csv; the default), file (leave one file
                   out) or a number N (N folds of files). At least two
                   groups are needed.
  --ridge X        ridge penalty relative to the mean diagonal of the normal
                   matrix (default 1e-06), or auto: chosen per horizon by
                   nested cross-validation over the groups
  --gap D          a gap longer than D resets a track (default 250ms)
  --date DATE      the date recorded in the file (default: today, UTC)
  --credit TEXT    a credit line for the data, recorded in the file
  --units, --markers  how to read CSV and C3D recordings

Use the file with "forereach eval --gains FILE" or the cell configuration's
forecast.gains. Progress is shown on standard error when it is a terminal.

Example:
  forereach fit --out gains.yaml ../shared/data/motion/*.csv`,
		Run: runFit,
	})
}

func runFit(args []string, stdout, stderr io.Writer) int {
	c := commands["fit"]
	fs := newFlagSet(c, stderr)
	rec := addRecordingFlags(fs)
	horizonList := fs.String("horizons", "50ms,100ms,150ms,200ms,250ms,300ms,350ms,400ms,450ms,500ms", "horizons")
	out := fs.String("out", "gains.yaml", "gains file to write")
	folds := fs.String("folds", "prefix", "cross-validation groups: prefix, file or N")
	ridgeFlag := fs.String("ridge", strconv.FormatFloat(forecast.DefaultRidge, 'g', -1, 64), "relative ridge penalty, or auto")
	gap := fs.Duration("gap", 250*time.Millisecond, "gap that resets a track")
	date := fs.String("date", "", "date recorded in the gains file")
	credit := fs.String("credit", "", "credit line for the data")
	paths, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	usageErr := func(err error) int {
		fmt.Fprintf(stderr, "forereach fit: %v\n", err)
		return 2
	}
	fail := func(err error) int {
		fmt.Fprintf(stderr, "forereach fit: %v\n", err)
		return 1
	}
	if len(paths) == 0 {
		return usageErr(errors.New("no recordings given"))
	}
	hs, err := parseHorizons(*horizonList)
	if err != nil {
		return usageErr(err)
	}
	ridge, ridgeCV := 0.0, *ridgeFlag == "auto"
	if !ridgeCV {
		if ridge, err = strconv.ParseFloat(*ridgeFlag, 64); err != nil || !(ridge > 0) || math.IsInf(ridge, 0) {
			return usageErr(fmt.Errorf("--ridge: %q: want auto or a number > 0", *ridgeFlag))
		}
	}
	if *gap <= 0 {
		return usageErr(errors.New("--gap must be > 0"))
	}
	opt, err := rec.options()
	if err != nil {
		return usageErr(err)
	}
	if *date == "" {
		*date = time.Now().UTC().Format("2006-01-02")
	}
	prog := newStderrProgress(stderr)
	files, err := readRecordings(paths, opt, stderr, prog)
	if err != nil {
		return fail(err)
	}
	if err := groupFiles(files, *folds); err != nil {
		return usageErr(err)
	}
	res, err := forecast.Fit(files, forecast.FitOptions{
		Horizons: hs, Ridge: ridge, RidgeCV: ridgeCV, GapReset: gap.Seconds(),
		Date: *date, Tool: "forereach " + version + " fit", Credit: *credit,
		Progress: func(stage string, done, total int) { prog.show("fit: "+stage, done, total) },
	})
	prog.done()
	if err != nil {
		return fail(err)
	}
	summary := stdout
	if *out == "-" {
		summary = stderr
		if err := forecast.WriteGains(stdout, res.Gains); err != nil {
			return fail(err)
		}
	} else if err := writeFile(*out, func(w io.Writer) error { return forecast.WriteGains(w, res.Gains) }); err != nil {
		return fail(err)
	}
	fmt.Fprintf(summary, "fitted %s on %d files in %d groups (%s); cross-validated errors:\n",
		forecast.FeatureSet, len(files), len(res.Groups), strings.Join(res.Groups, ", "))
	printErrorTable(summary, res.CVScorer().Stats(forecast.KindFitted))
	if *out != "-" {
		fmt.Fprintf(summary, "gains written to %s\n", *out)
	}
	return 0
}
