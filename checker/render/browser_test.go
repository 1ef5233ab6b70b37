package render

import (
	"context"
	"encoding/json"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// pageProbe is what the probe page reports about the report it loads in a
// frame: every <svg> with its rendered size and number of drawn elements.
type pageProbe struct {
	SVGs []struct {
		ID       string  `json:"id"`
		Width    float64 `json:"w"`
		Height   float64 `json:"h"`
		Elements int     `json:"n"`
	} `json:"svgs"`
	Title string `json:"title"`
	Error string `json:"error"`
}

// The probe page is test scaffolding only: the report itself carries no
// script. It loads the report in a same-origin frame and measures it.
const probeHTML = `<!DOCTYPE html><html><body><iframe id="f" src="/report.html" style="width:1280px;height:2000px"></iframe>
<script>
document.getElementById('f').addEventListener('load', function () {
  var out = {svgs: [], title: '', error: ''};
  try {
    var d = this.contentDocument;
    out.title = d.title;
    d.querySelectorAll('svg').forEach(function (s) {
      var r = s.getBoundingClientRect();
      var fig = s.closest('figure');
      out.svgs.push({id: fig ? fig.id : '', w: r.width, h: r.height, n: s.querySelectorAll('path,circle,text,rect,line,polyline,polygon').length});
    });
  } catch (e) { out.error = String(e); }
  var pre = document.createElement('pre'); pre.id = 'probe'; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script></body></html>`

func chromiumPath() string {
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	return ""
}

func chromiumArgs(userDir string, extra ...string) []string {
	args := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir=" + userDir}
	return append(args, extra...)
}

// probeReport serves page from a loopback test server, loads it in
// headless Chromium, and returns the probe, the console errors and (when
// screenshot is not empty) writes a PNG screenshot.
func probeReport(t *testing.T, page []byte, screenshot string) (pageProbe, []string) {
	t.Helper()
	bin := chromiumPath()
	if bin == "" {
		t.Skip("chromium not installed; the report browser test needs Debian's chromium package (.ci/run installs it)")
	}
	mux := http.NewServeMux()
	mux.HandleFunc("/report.html", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		w.Write(page)
	})
	mux.HandleFunc("/probe.html", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		w.Write([]byte(probeHTML))
	})
	srv := httptest.NewServer(mux)
	defer srv.Close()

	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()
	dir := t.TempDir()
	cmd := exec.CommandContext(ctx, bin, chromiumArgs(filepath.Join(dir, "probe-profile"),
		"--enable-logging=stderr", "--v=0", "--virtual-time-budget=15000", "--dump-dom", srv.URL+"/probe.html")...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("chromium: %v\n%s", err, stderr.String())
	}
	m := regexp.MustCompile(`(?s)<pre id="probe">(.*?)</pre>`).FindSubmatch(out)
	if m == nil {
		t.Fatalf("probe did not report; chromium printed:\n%s", stderr.String())
	}
	var probe pageProbe
	js := strings.NewReplacer("&quot;", `"`, "&amp;", "&", "&lt;", "<", "&gt;", ">").Replace(string(m[1]))
	if err := json.Unmarshal([]byte(js), &probe); err != nil {
		t.Fatalf("probe output %q: %v", js, err)
	}
	var consoleErrors []string
	for _, line := range strings.Split(stderr.String(), "\n") {
		if strings.Contains(line, "CONSOLE") && (strings.Contains(line, "Uncaught") || strings.Contains(line, "rror")) {
			consoleErrors = append(consoleErrors, line)
		}
	}
	if screenshot != "" {
		cmd := exec.CommandContext(ctx, bin, chromiumArgs(filepath.Join(dir, "shot-profile"),
			"--hide-scrollbars", "--window-size=1280,1800", "--virtual-time-budget=10000", "--screenshot="+screenshot, srv.URL+"/report.html")...)
		if b, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("chromium screenshot: %v\n%s", err, b)
		}
		if fi, err := os.Stat(screenshot); err != nil || fi.Size() < 10000 {
			t.Fatalf("screenshot %s missing or tiny: %v", screenshot, err)
		}
	}
	return probe, consoleErrors
}

// checkRenderedReport asserts that every figure is drawn with a real size
// and content, and that the page logged no console errors.
func checkRenderedReport(t *testing.T, probe pageProbe, consoleErrors []string, wantSVGs int) {
	t.Helper()
	if probe.Error != "" {
		t.Fatalf("probe error: %s", probe.Error)
	}
	if len(consoleErrors) > 0 {
		t.Errorf("console errors:\n%s", strings.Join(consoleErrors, "\n"))
	}
	if len(probe.SVGs) != wantSVGs {
		t.Errorf("rendered %d svg elements, want %d", len(probe.SVGs), wantSVGs)
	}
	for _, s := range probe.SVGs {
		if s.Width < 100 || s.Height < 60 || s.Elements < 10 {
			t.Errorf("figure %q rendered %.0fx%.0f with %d elements: looks empty", s.ID, s.Width, s.Height, s.Elements)
		}
	}
}

func TestReportRendersInBrowser(t *testing.T) {
	rep := BuildReport(syntheticResult())
	page, err := rep.HTML()
	if err != nil {
		t.Fatal(err)
	}
	probe, errs := probeReport(t, page, filepath.Join(t.TempDir(), "shot.png"))
	checkRenderedReport(t, probe, errs, 5)
	if !strings.Contains(probe.Title, "T-1") {
		t.Errorf("page title %q", probe.Title)
	}
}
