package report_test

import (
	"testing"

	"gaptrace/profile/report"
)

// BenchmarkWrite renders a typical run's six figures and the page.
func BenchmarkWrite(b *testing.B) {
	d := fullData(b)
	dir := b.TempDir()
	for b.Loop() {
		if _, err := report.Write(dir, d); err != nil {
			b.Fatal(err)
		}
	}
}
