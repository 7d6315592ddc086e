package report_test

import (
	"fmt"
	"log"
	"os"

	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/report/internal/scenario"
)

// Write renders the figures and report.html into a folder; a figure whose
// data is missing is left out and named in the report.
func ExampleWrite() {
	dir, err := os.MkdirTemp("", "gaptrace-report-")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)

	d := &report.Data{
		Summary:        scenario.Summary(), // the run's summary.json
		ExperimentYAML: scenario.YAML,
		Profiles:       []*figure.PhaseProfile{scenario.Profile()},
		Slip:           scenario.Slip(),
		AfterStop:      scenario.AfterStop(),
	}
	names, err := report.Write(dir, d)
	if err != nil {
		log.Fatal(err)
	}
	for _, n := range names {
		fmt.Println(n)
	}
	// Output:
	// figure_profile_1.png
	// figure_profile_1.svg
	// figure_profile_1.pdf
	// figure_profile_1.csv
	// figure_slip.png
	// figure_slip.svg
	// figure_slip.pdf
	// figure_slip.csv
	// figure_after_stop.png
	// figure_after_stop.svg
	// figure_after_stop.pdf
	// figure_after_stop.csv
	// report.html
}
