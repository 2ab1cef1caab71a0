package pdf

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"html"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sync"
	"time"

	"github.com/chromedp/chromedp"
	"github.com/rs/zerolog"
)

// EnvChromium names the browser to print with, overriding the search.
const EnvChromium = "DEWLINE_CHROMIUM"

// ErrNoChromium is the start of the error when no browser can be found.
var ErrNoChromium = errors.New("--pdf needs Chromium: install the Debian package chromium (apt-get install chromium) or set " + EnvChromium)

// pdfTimeout bounds one print: starting the browser, loading the file and
// printing it.
const pdfTimeout = 2 * time.Minute

// findChromium returns the browser to print with: $DEWLINE_CHROMIUM when
// set (and then nothing else), else /usr/bin/chromium, else chromium or
// Google Chrome on the PATH.
func findChromium() (string, error) {
	if p := os.Getenv(EnvChromium); p != "" {
		st, err := os.Stat(p)
		if err != nil {
			return "", fmt.Errorf("%s=%s: %w", EnvChromium, p, err)
		}
		if st.IsDir() || st.Mode()&0o111 == 0 {
			return "", fmt.Errorf("%s=%s is not an executable file", EnvChromium, p)
		}
		return p, nil
	}
	if st, err := os.Stat("/usr/bin/chromium"); err == nil && !st.IsDir() {
		return "/usr/bin/chromium", nil
	}
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome", "google-chrome-stable"} {
		if p, err := exec.LookPath(name); err == nil {
			return p, nil
		}
	}
	return "", fmt.Errorf("no chromium, chromium-browser or google-chrome on the PATH")
}

// HeadlessOptions are the options dewline starts Chromium bin with
// (headless, no GPU, no first-run or default-browser questions, the
// profile in the folder profile, no background networking, component
// updates, sync, QUIC or extensions, no /dev/shm, and no sandbox as root,
// where Chromium refuses to start it). The browser tests of the dashboard
// start theirs with the same options.
func HeadlessOptions(bin, profile string) []chromedp.ExecAllocatorOption {
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(bin),
		chromedp.Headless,
		chromedp.DisableGPU,
		chromedp.NoFirstRun,
		chromedp.NoDefaultBrowserCheck,
		chromedp.UserDataDir(profile),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-extensions", true),
		chromedp.Flag("disable-dev-shm-usage", true),
	}
	if os.Geteuid() == 0 {
		opts = append(opts, chromedp.NoSandbox)
	}
	return opts
}

// Print prints the HTML file htmlPath with headless Chromium and returns
// the PDF. The browser gets a fresh profile in a
// temporary folder, no background networking, no component updates, no
// sync and no QUIC; it loads the file from disk, and the report refers to
// nothing outside itself. The page size and margins are the report's own
// (@page); the footer carries the title and page numbers.
func Print(ctx context.Context, htmlPath, title string, log zerolog.Logger) ([]byte, error) {
	bin, err := findChromium()
	if err != nil {
		return nil, fmt.Errorf("%w (%v); the HTML report was written to %s", ErrNoChromium, err, htmlPath)
	}
	abs, err := filepath.Abs(htmlPath)
	if err != nil {
		return nil, err
	}
	profile, err := os.MkdirTemp("", "dewline-chromium-")
	if err != nil {
		return nil, fmt.Errorf("print the report: a profile folder for Chromium: %w", err)
	}
	defer os.RemoveAll(profile)

	var browserOut browserLog
	opts := append(HeadlessOptions(bin, profile),
		chromedp.Flag("disable-default-apps", true),
		chromedp.Flag("disable-breakpad", true),
		chromedp.Flag("metrics-recording-only", true),
		chromedp.Flag("password-store", "basic"),
		chromedp.CombinedOutput(&browserOut),
	)
	tctx, cancel := context.WithTimeout(ctx, pdfTimeout)
	defer cancel()
	actx, cancelAlloc := chromedp.NewExecAllocator(tctx, opts...)
	defer cancelAlloc()
	bctx, cancelBrowser := chromedp.NewContext(actx)
	defer cancelBrowser()

	log.Debug().Str("chromium", bin).Str("file", abs).Msg("printing the report")
	start := time.Now()
	fileURL := (&url.URL{Scheme: "file", Path: filepath.ToSlash(abs)}).String()
	if err := chromedp.Do(bctx, chromedp.Navigate(fileURL)); err != nil {
		return nil, chromiumError(bin, err, browserOut.String(), htmlPath)
	}
	footer := `<div style="font-family: system-ui, sans-serif; font-size: 7.5pt; color: #5b6b76; width: 100%; margin: 0 14mm; display: flex; justify-content: space-between;">` +
		`<span>` + html.EscapeString(title) + `</span><span>page <span class="pageNumber"></span> of <span class="totalPages"></span></span></div>`
	buf, err := chromedp.Run(bctx, chromedp.PrintToPDF(
		chromedp.PDFPreferCSSPageSize(),
		chromedp.PDFPrintBackground(),
		chromedp.PDFHeaderTemplate(`<span></span>`),
		chromedp.PDFFooterTemplate(footer),
		chromedp.PDFOutlineAndTagged(),
		chromedp.PDFStream(),
	))
	if err != nil {
		return nil, chromiumError(bin, err, browserOut.String(), htmlPath)
	}
	if err := chromedp.Cancel(bctx); err != nil {
		log.Debug().Err(err).Msg("closing Chromium")
	}
	if !bytes.HasPrefix(buf, []byte("%PDF")) {
		return nil, fmt.Errorf("print the report: Chromium returned %d bytes that are not a PDF; the HTML report was written to %s", len(buf), htmlPath)
	}
	log.Debug().Dur("took_ms", time.Since(start)).Int("bytes", len(buf)).Msg("chromium printed the report")
	return buf, nil
}

func chromiumError(bin string, err error, output, htmlPath string) error {
	msg := fmt.Sprintf("print the report with %s: %v", bin, err)
	if tail := lastLines(output, 3); tail != "" {
		msg += " (browser said: " + tail + ")"
	}
	return fmt.Errorf("%s; the HTML report was written to %s", msg, htmlPath)
}

// lastLines returns up to n last non-empty lines of s, joined by " | ".
func lastLines(s string, n int) string {
	lines := bytes.Split(bytes.TrimSpace([]byte(s)), []byte("\n"))
	if len(lines) > n {
		lines = lines[len(lines)-n:]
	}
	return string(bytes.Join(lines, []byte(" | ")))
}

// pageObject matches a page object of a PDF (not the /Pages tree nodes).
var pageObject = regexp.MustCompile(`/Type\s*/Page\b`)

// Pages counts the page objects of a PDF written without object streams
// (as Chromium writes them).
func Pages(pdf []byte) int { return len(pageObject.FindAll(pdf, -1)) }

// browserLog keeps what the browser writes (from chromedp's goroutine) for
// the error message.
type browserLog struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *browserLog) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.b.Len() > 64<<10 {
		return len(p), nil
	}
	return l.b.Write(p)
}

func (l *browserLog) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}
