//go:build report

package main

import (
	"io"

	"forereach/forecast"
	"forereach/report"
)

func init() {
	errorsFigure = func(w io.Writer, rows []forecast.ErrorStats, title string) error {
		return report.ErrorsFigure(w, rows, report.ErrorsOptions{Title: title})
	}
}
