package main

import (
	"io"

	"forereach/report"
	"forereach/review"
	"forereach/zones"
)

func init() {
	reviewHTML = func(w io.Writer, res *review.Result, cfg *zones.Config) error {
		return report.ReviewHTML(w, cfg, res)
	}
	marginsFigure = report.MarginSweepFigure
}
