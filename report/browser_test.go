package report

import (
	"os"
	"path/filepath"
	"testing"

	"headroom/report/reportcheck"
)

// TestHTMLInBrowser opens the demo-sized report in headless Chromium, the
// real consumer of the page, and checks what a reader sees and does.
func TestHTMLInBrowser(t *testing.T) {
	d := demoDocument(3000)
	path := filepath.Join(t.TempDir(), "report.html")
	if err := os.WriteFile(path, render(t, d), 0o644); err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, c := range d.Charts {
		ids = append(ids, c.ID)
	}
	if dir := os.Getenv("HEADROOM_ARTIFACTS"); dir != "" {
		// Keep the page beside its screenshots, to open by hand.
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "report.html"), render(t, d), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	reportcheck.InBrowser(t, path, len(d.Map.Mains), ids)
}
