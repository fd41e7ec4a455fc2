// Package reportcheck checks an evidence report (report.html) the way a
// reader meets it: opened offline in headless Chromium. For tests only.
package reportcheck

import (
	"context"
	"encoding/json"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/cdproto/input"
	"github.com/chromedp/cdproto/network"
	"github.com/chromedp/cdproto/page"
	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
)

// chromiumPath is Debian's Chromium (package chromium), which CI installs.
const chromiumPath = "/usr/bin/chromium"

// InBrowser opens htmlPath as a file:// page in headless Chromium and
// checks that the page
//
//   - requests nothing but itself (every Network.requestWillBeSent event),
//   - throws no script error and logs no console error,
//   - draws wantMains path.main elements,
//   - lays out #map-legend and every chart in chartIDs with a non-empty box,
//   - shows #map-tip with a main's ID when the mouse is over that main,
//   - zooms with the + button and the wheel, and resets,
//   - goes to a main's evidence sheet when the main is clicked,
//
// then saves a full-page screenshot, report.png, and one of the map with a
// tooltip, report-map.png, to $HEADROOM_ARTIFACTS (default a temporary
// directory). It skips when Chromium is missing, unless
// HEADROOM_REQUIRE_BROWSER=1.
func InBrowser(t *testing.T, htmlPath string, wantMains int, chartIDs []string) {
	t.Helper()
	if _, err := os.Stat(chromiumPath); err != nil {
		if os.Getenv("HEADROOM_REQUIRE_BROWSER") == "1" {
			t.Fatalf("HEADROOM_REQUIRE_BROWSER=1 but Chromium is missing: %v", err)
		}
		t.Skipf("Chromium not found at %s: %v", chromiumPath, err)
	}
	abs, err := filepath.Abs(htmlPath)
	if err != nil {
		t.Fatal(err)
	}
	pageURL := (&url.URL{Scheme: "file", Path: filepath.ToSlash(abs)}).String()

	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	allocCtx, cancelAlloc := chromedp.NewExecAllocator(ctx,
		chromedp.ExecPath(chromiumPath),
		chromedp.Headless,
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.NoFirstRun,
		chromedp.NoDefaultBrowserCheck,
		chromedp.UserDataDir(t.TempDir()),
		chromedp.WindowSize(1280, 1000),
	)
	defer cancelAlloc()

	var mu sync.Mutex
	var requests, problems []string
	tab, cancelTab := chromedp.NewContext(allocCtx, chromedp.WithListener(func(ev any) {
		// Runs in the tab's message loop: record and return.
		mu.Lock()
		defer mu.Unlock()
		switch e := ev.(type) {
		case *network.EventRequestWillBeSent:
			requests = append(requests, e.Request.URL)
		case *runtime.EventExceptionThrown:
			msg := e.ExceptionDetails.Text
			if e.ExceptionDetails.Exception != nil {
				msg += " " + e.ExceptionDetails.Exception.Description
			}
			problems = append(problems, "exception: "+msg)
		case *runtime.EventConsoleAPICalled:
			if e.Type == runtime.ConsoleAPICalledTypeError {
				problems = append(problems, "console error")
			}
		}
	}))
	defer cancelTab()

	if err := chromedp.Do(tab, chromedp.Navigate(pageURL)); err != nil {
		t.Fatalf("opening %s: %v", pageURL, err)
	}
	eval := func(name, js string, res any) {
		t.Helper()
		v, err := chromedp.Run(tab, chromedp.Evaluate[json.RawMessage](js))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if err := json.Unmarshal(v, res); err != nil {
			t.Fatalf("%s: decoding %s: %v", name, v, err)
		}
	}

	var mains int
	eval("counting mains", `document.querySelectorAll('path.main').length`, &mains)
	if mains != wantMains {
		t.Errorf("got %d path.main in the browser, want %d", mains, wantMains)
	}

	for _, id := range append([]string{"map-legend", "map-svg"}, chartIDs...) {
		q, _ := json.Marshal(id)
		var box []float64
		eval("measuring #"+id, fmt.Sprintf(`(() => { const e = document.getElementById(%s); if (!e) return null;
			const r = e.getBoundingClientRect(); return [r.width, r.height]; })()`, q), &box)
		if len(box) != 2 || box[0] <= 0 || box[1] <= 0 {
			t.Errorf("#%s: got box %v, want a non-zero width and height", id, box)
		}
	}

	// Hover: the middle of the first main (in drawing order) that is on
	// screen and not covered by a hydrant, found by elementFromPoint.
	type spot struct {
		ID    string  `json:"id"`
		Sheet string  `json:"sheet"`
		X     float64 `json:"x"`
		Y     float64 `json:"y"`
	}
	find := func(linked bool) spot {
		t.Helper()
		var s *spot
		eval("finding a main to point at", fmt.Sprintf(`(() => {
			document.getElementById('map-svg').scrollIntoView({block: 'center'});
			for (const p of document.querySelectorAll(%q)) {
				const len = p.getTotalLength();
				if (!(len > 0)) continue;
				const q = p.getPointAtLength(len / 2), m = p.getScreenCTM();
				const x = m.a * q.x + m.c * q.y + m.e, y = m.b * q.x + m.d * q.y + m.f;
				if (x < 1 || y < 1 || x > innerWidth - 1 || y > innerHeight - 1) continue;
				if (document.elementFromPoint(x, y) !== p) continue;
				const a = p.closest('a');
				return {id: p.getAttribute('data-id'), sheet: a ? decodeURIComponent(a.getAttribute('href').slice(1)) : '', x, y};
			}
			return null; })()`, map[bool]string{false: "path.main", true: "a path.main"}[linked]), &s)
		if s == nil {
			t.Fatalf("no main on screen to point at (linked %v)", linked)
		}
		return *s
	}
	m := find(false)
	if err := chromedp.Do(tab, chromedp.MouseEvent(chromedp.MouseMoved, m.X, m.Y)); err != nil {
		t.Fatalf("moving the mouse: %v", err)
	}
	q, _ := json.Marshal(m.ID)
	if _, err := chromedp.Run(tab, chromedp.Poll[bool](fmt.Sprintf(`(() => { const t = document.getElementById('map-tip');
		return !t.hidden && getComputedStyle(t).display !== 'none' && t.offsetWidth > 0 && t.offsetHeight > 0 &&
			t.textContent.includes(%s); })()`, q), chromedp.WithPollingTimeout(5*time.Second))); err != nil {
		var tip string
		eval("reading the tooltip", `document.getElementById('map-tip').outerHTML`, &tip)
		t.Errorf("pointing at main %s: #map-tip did not show it (%v): %s", m.ID, err, tip)
	}
	saveScreenshot(t, tab, "report-map.png", chromedp.Screenshot(chromedp.ID("hr-map")))

	// Zoom: + narrows the viewBox, reset restores it, the wheel narrows it.
	viewWidth := func() float64 {
		var w float64
		eval("reading the viewBox", `document.getElementById('map-svg').viewBox.baseVal.width`, &w)
		return w
	}
	w0 := viewWidth()
	if err := chromedp.Do(tab, chromedp.Click(chromedp.ID("map-zoom-in"))); err != nil {
		t.Fatalf("clicking +: %v", err)
	}
	if w := viewWidth(); !(w < w0*0.9) {
		t.Errorf("after +: viewBox width %g, want less than %g", w, w0*0.9)
	}
	if err := chromedp.Do(tab, chromedp.Click(chromedp.ID("map-reset"))); err != nil {
		t.Fatalf("clicking reset: %v", err)
	}
	if w := viewWidth(); w != w0 {
		t.Errorf("after reset: viewBox width %g, want %g", w, w0)
	}
	m = find(false)
	if err := chromedp.Do(tab, chromedp.MouseEvent(chromedp.MouseWheel, m.X, m.Y,
		// Chrome wants both deltas, and cdproto leaves a zero out, so
		// deltaX is a hundredth of a pixel.
		func(p *input.DispatchMouseEventParams) { p.DeltaX, p.DeltaY = 0.01, -400 })); err != nil {
		t.Fatalf("turning the wheel: %v", err)
	}
	if _, err := chromedp.Run(tab, chromedp.Poll[bool](fmt.Sprintf(
		`document.getElementById('map-svg').viewBox.baseVal.width < %g`, w0*0.9), chromedp.WithPollingTimeout(5*time.Second))); err != nil {
		t.Errorf("after the wheel: viewBox width %g, want less than %g", viewWidth(), w0*0.9)
	}
	if err := chromedp.Do(tab, chromedp.Click(chromedp.ID("map-reset"))); err != nil {
		t.Fatalf("clicking reset: %v", err)
	}

	// Drag: starting on a main with a sheet, a drag pans the map and does
	// not open the sheet.
	m = find(true)
	var x0 float64
	eval("reading the viewBox", `document.getElementById('map-svg').viewBox.baseVal.x`, &x0)
	left := func(p *input.DispatchMouseEventParams) { p.Button, p.Buttons = input.MouseButtonLeft, 1 }
	if err := chromedp.Do(tab,
		chromedp.MouseEvent(chromedp.MousePressed, m.X, m.Y, left, chromedp.ClickCount(1)),
		chromedp.MouseEvent(chromedp.MouseMoved, m.X+40, m.Y, left),
		chromedp.MouseEvent(chromedp.MouseMoved, m.X+120, m.Y, left),
		chromedp.MouseEvent(chromedp.MouseReleased, m.X+120, m.Y, left, chromedp.ClickCount(1)),
	); err != nil {
		t.Fatalf("dragging the map: %v", err)
	}
	var dragged struct {
		X    float64 `json:"x"`
		Hash string  `json:"hash"`
	}
	eval("reading the view after the drag", `({x: document.getElementById('map-svg').viewBox.baseVal.x, hash: location.hash})`, &dragged)
	if !(dragged.X < x0-1) || dragged.Hash != "" {
		t.Errorf("dragging 120 px right from main %s: viewBox x %g → %g and location %q, want x smaller and no navigation",
			m.ID, x0, dragged.X, dragged.Hash)
	}
	if err := chromedp.Do(tab, chromedp.Click(chromedp.ID("map-reset"))); err != nil {
		t.Fatalf("clicking reset: %v", err)
	}

	// Keyboard: focusing a hydrant shows its tooltip.
	var hydrant string
	eval("focusing a hydrant", `(() => { const h = document.querySelector('g.hydrant'); if (!h) return '';
		h.focus(); const t = document.getElementById('map-tip');
		return !t.hidden && t.textContent.includes(h.getAttribute('data-id')) ? 'shown' : 'hidden: ' + t.textContent; })()`, &hydrant)
	if hydrant != "shown" && hydrant != "" {
		t.Errorf("focusing a hydrant: tooltip %s", hydrant)
	}

	// Click: a main with a sheet opens that sheet (its anchor).
	m = find(true)
	if err := chromedp.Do(tab, chromedp.MouseClickXY(m.X, m.Y)); err != nil {
		t.Fatalf("clicking main %s: %v", m.ID, err)
	}
	var at struct {
		Hash string  `json:"hash"`
		Top  float64 `json:"top"`
	}
	eval("reading the location", `(() => { const h = decodeURIComponent(location.hash.slice(1)), e = document.getElementById(h);
		return {hash: h, top: e ? e.getBoundingClientRect().top : -1e9}; })()`, &at)
	if at.Hash != m.Sheet || at.Top < -2 || at.Top > 200 {
		t.Errorf("clicking main %s: at #%s (sheet top %g px), want sheet %s at the top of the window", m.ID, at.Hash, at.Top, m.Sheet)
	}

	var scrolled bool
	eval("scrolling to the top", `(window.scrollTo(0, 0), true)`, &scrolled)
	saveScreenshot(t, tab, "report.png", chromedp.FullScreenshot(100))

	// Print: under print media every sheet breaks to a new page and the
	// controls are hidden (CSS Fragmentation 3 break-before: page), and
	// the PDF has at least one page per sheet plus the pages before.
	if _, err := chromedp.Call(tab, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{Media: "print"}); err != nil {
		t.Fatalf("emulating print media: %v", err)
	}
	var printed struct {
		Sheets   int      `json:"sheets"`
		Breaking int      `json:"breaking"`
		Shown    []string `json:"shown"`
	}
	eval("reading the print layout", `(() => {
		const sheets = [...document.querySelectorAll('section.sheet')];
		const shown = ['.map-controls', '#map-tip', '.sheet-nav', '.map-hint'].filter(q =>
			[...document.querySelectorAll(q)].some(e => getComputedStyle(e).display !== 'none'));
		return {sheets: sheets.length, breaking: sheets.filter(e => getComputedStyle(e).breakBefore === 'page').length, shown};
	})()`, &printed)
	if printed.Breaking != printed.Sheets || len(printed.Shown) > 0 {
		t.Errorf("print media: %d of %d sheets start a page, controls shown: %q; want all sheets and no controls",
			printed.Breaking, printed.Sheets, printed.Shown)
	}
	if _, err := chromedp.Call(tab, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{}); err != nil {
		t.Fatalf("ending print media: %v", err)
	}
	sheets := printed.Sheets
	pdf, err := chromedp.Call(tab, page.PrintToPDF, page.PrintToPDFParams{PrintBackground: new(true)})
	if err != nil {
		t.Fatalf("printing to PDF: %v", err)
	}
	saveArtifact(t, "report.pdf", pdf.Data)
	// PDF 1.7 (ISO 32000-1) §7.7.3.3: each page is a dictionary of /Type /Page.
	if pages := len(pdfPage.FindAll(pdf.Data, -1)); pages == 0 {
		t.Log("no page objects found in the PDF (compressed object streams?); page count not checked")
	} else if pages < sheets+1 {
		t.Errorf("printed %d pages for %d evidence sheets; want each sheet to start a page", pages, sheets)
	}

	mu.Lock()
	defer mu.Unlock()
	for _, u := range requests {
		if u != pageURL {
			t.Errorf("the page requested %s; it must request nothing but itself (%s)", u, pageURL)
		}
	}
	if len(requests) == 0 {
		t.Error("saw no request at all, not even the page: the network listener is not working")
	}
	if len(problems) > 0 {
		t.Errorf("script problems: %s", strings.Join(problems, "; "))
	}
}

// pdfPage matches a page object's type entry, not the /Pages tree nodes.
var pdfPage = regexp.MustCompile(`/Type\s*/Page\b`)

// saveScreenshot takes a screenshot and saves it with saveArtifact.
func saveScreenshot(t *testing.T, tab context.Context, name string, shot chromedp.Action[[]byte]) {
	t.Helper()
	png, err := chromedp.Run(tab, shot)
	if err != nil {
		t.Fatalf("screenshot %s: %v", name, err)
	}
	saveArtifact(t, name, png)
}

// saveArtifact writes b under $HEADROOM_ARTIFACTS (default a temporary
// directory), logging the path.
func saveArtifact(t *testing.T, name string, b []byte) {
	t.Helper()
	dir := os.Getenv("HEADROOM_ARTIFACTS")
	if dir == "" {
		dir = t.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, strings.NewReplacer("/", "-", " ", "-").Replace(t.Name())+"-"+name)
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("saved %s", path)
}
