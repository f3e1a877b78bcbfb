// Package pagefit measures, in a real browser, whether an HTML page fits
// its page: it loads the page in headless Chromium (Debian's chromium,
// driven over the DevTools protocol with chromedp) at given screen widths
// and in print emulation, and lists every element whose right edge lies
// beyond the page's width (document.documentElement.clientWidth).
//
// On screen, an element inside a box that scrolls sideways (overflow-x
// auto or scroll) and that itself fits is not an overflow: the reader
// scrolls that box. In print nothing scrolls, so there every element
// counts.
//
// It owns the measurement, in a headless browser, of whether a page fits
// its width and its printed page.
package pagefit

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/chromedp"
)

// Mode is one way the page is looked at.
type Mode struct {
	Name  string
	Width int64 // the layout width in CSS pixels
	Print bool  // print media emulated
}

// A4PrintWidth is the width of an A4 portrait page's printable area in
// CSS pixels (96 per inch) with the report's @page side margins of 12 mm:
// (210 - 2*12) mm / 25.4 mm * 96 = 703 px.
const A4PrintWidth = 703

// Modes are the widths the report must fit: two screens and A4 print.
var Modes = []Mode{
	{Name: "screen 1024 px", Width: 1024},
	{Name: "screen 1400 px", Width: 1400},
	{Name: "A4 portrait print", Width: A4PrintWidth, Print: true},
}

// Overflow is one element beyond the page's right edge.
type Overflow struct {
	Mode    string  `json:"mode"`
	Element string  `json:"element"` // tag, id, class, section and the start of its text
	Right   float64 `json:"right"`   // its right edge, CSS px
	Page    float64 `json:"page"`    // the page's width, CSS px
}

func (o Overflow) String() string {
	return fmt.Sprintf("%s: %s reaches %.0f px, page %.0f px", o.Mode, o.Element, o.Right, o.Page)
}

// Browser returns the path of Debian's chromium (or chromium-browser) on
// PATH, or "" when there is none.
func Browser() string {
	for _, b := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(b); err == nil {
			return p
		}
	}
	return ""
}

// measure is run in the page: the outermost elements whose right edge
// passes the page, skipping (on screen) those a fitting sideways-scrolling
// box holds.
const measure = `(() => {
  const print = %t;
  const W = document.documentElement.clientWidth;
  const scrolls = (el) => {
    for (let a = el.parentElement; a && a !== document.body; a = a.parentElement) {
      const o = getComputedStyle(a).overflowX;
      if (o === 'auto' || o === 'scroll' || o === 'hidden' || o === 'clip') {
        return a.getBoundingClientRect().right <= W + 0.5;
      }
    }
    return false;
  };
  const beyond = (el) => {
    const r = el.getBoundingClientRect();
    return (r.width > 0 || r.height > 0) && r.right > W + 0.5 && !(!print && scrolls(el));
  };
  const out = [];
  for (const el of document.body.querySelectorAll('*')) {
    if (!beyond(el)) continue;
    if (el.parentElement && el.parentElement !== document.body && beyond(el.parentElement)) continue;
    const sec = el.closest('section');
    let name = el.tagName.toLowerCase();
    if (el.id) name += '#' + el.id;
    const cls = el.getAttribute('class');
    if (cls) name += '.' + cls.trim().split(/\s+/).join('.');
    if (sec && sec.id) name += ' in section #' + sec.id;
    const text = (el.textContent || '').replace(/\s+/g, ' ').trim().slice(0, 60);
    if (text) name += ' ("' + text + '")';
    out.push({element: name, right: el.getBoundingClientRect().right, page: W});
  }
  return out;
})()`

// Check loads the page at path in browser in each mode and returns every
// overflow found. It fails when the browser cannot be started or the page
// not loaded.
func Check(ctx context.Context, browser, path string, modes []Mode) ([]Overflow, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	if _, err := os.Stat(abs); err != nil {
		return nil, err
	}
	profile, err := os.MkdirTemp("", "leadline-pagefit-")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(profile)
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(browser),
		chromedp.UserDataDir(profile),
		chromedp.NoSandbox,
		chromedp.Flag("disable-gpu", true),
		chromedp.Flag("hide-scrollbars", true),
		// No network: host names resolve to nothing, connections go to a
		// dead proxy (the report fetches nothing; this makes sure).
		chromedp.Flag("host-resolver-rules", "MAP * ~NOTFOUND"),
		chromedp.Flag("proxy-server", "127.0.0.1:9"),
	)
	actx, cancel := chromedp.NewExecAllocator(ctx, opts...)
	defer cancel()
	bctx, cancel := chromedp.NewContext(actx)
	defer cancel()
	var out []Overflow
	for i, m := range modes {
		media := ""
		if m.Print {
			media = "print"
		}
		steps := []chromedp.Action[chromedp.Void]{
			chromedp.EmulateViewport(m.Width, 900),
			chromedp.Func(func(ctx context.Context, t *chromedp.Target) error {
				_, err := cdp.Call(ctx, t, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{Media: media})
				return err
			}),
		}
		if i == 0 {
			steps = append(steps, chromedp.Navigate("file://"+abs))
		}
		// The first Run starts the browser: no timeout on it (a timeout
		// would stop the browser with it); later steps get one.
		runCtx := bctx
		if i > 0 {
			var c context.CancelFunc
			runCtx, c = context.WithTimeout(bctx, 2*time.Minute)
			defer c()
		}
		if err := chromedp.Do(runCtx, steps...); err != nil {
			return nil, fmt.Errorf("%s: %w", m.Name, err)
		}
		found, err := chromedp.Run(runCtx, chromedp.Evaluate[[]Overflow](fmt.Sprintf(measure, m.Print)))
		if err != nil {
			return nil, fmt.Errorf("%s: measuring: %w", m.Name, err)
		}
		for _, f := range found {
			f.Mode = m.Name
			out = append(out, f)
		}
	}
	return out, nil
}
