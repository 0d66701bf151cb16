package window

import (
	"context"
	"errors"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
	"lodestone/sampledata"
)

// fakeChooser answers the file dialogs without a person: each call takes
// the next answer ("" cancels), or the last one again when the list is used
// up, and is recorded.
type fakeChooser struct {
	mu      sync.Mutex
	answers []string
	asked   []string // the titles asked, in order
}

func chooserAnswering(paths ...string) *fakeChooser { return &fakeChooser{answers: paths} }

func (c *fakeChooser) next(title string) (string, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.asked = append(c.asked, title)
	if len(c.answers) == 0 {
		return "", errChoiceCancelled
	}
	p := c.answers[0]
	if len(c.answers) > 1 {
		c.answers = c.answers[1:]
	}
	if p == "" {
		return "", errChoiceCancelled
	}
	return p, nil
}

// answer sets what the next calls answer.
func (c *fakeChooser) answer(paths ...string) {
	c.mu.Lock()
	c.answers = paths
	c.mu.Unlock()
}

// pending returns the next answer.
func (c *fakeChooser) pending() string {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.answers[0]
}

func (c *fakeChooser) OpenFile(title string) (string, error)   { return c.next(title) }
func (c *fakeChooser) OpenFolder(title string) (string, error) { return c.next(title) }
func (c *fakeChooser) SaveFile(title, _, _ string, _ ...string) (string, error) {
	return c.next(title)
}

// waitFor polls cond on the UI goroutine until it holds or the time is up.
func waitFor(t *testing.T, what string, limit time.Duration, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for time.Now().Before(deadline) {
		ok := false
		fyne.DoAndWait(func() { ok = cond() })
		if ok {
			return
		}
		time.Sleep(10 * time.Millisecond)
	}
	t.Fatalf("timed out waiting for %s", what)
}

// onUI runs f on the UI goroutine and waits for it.
func onUI(f func()) { fyne.DoAndWait(f) }

// fixture is a small invented atlas, prepared once for the package's tests.
var fixture struct {
	once sync.Once
	d    *atlas.Dataset
	p    *pipeline.Prepared
	err  error
}

// fixtureOptions make the tests' atlas: small enough for a run of 750
// iterations in well under a second.
var fixtureOptions = sampledata.Options{Cells: 600, Genes: 600, Seed: sampledata.DefaultSeed}

// fixtureSettings are the preparation's settings for the tests' atlas.
func fixtureSettings() pipeline.Settings {
	s := pipeline.Default()
	s.Threads = 2
	s.Prep.PCA.Components = 20
	return s
}

// preparedFixture returns a copy of the prepared fixture atlas that a view
// may change (its annotation columns, graph and affinities).
func preparedFixture(t *testing.T) (*atlas.Dataset, *pipeline.Prepared) {
	t.Helper()
	fixture.once.Do(func() {
		fixture.d, _, fixture.err = sampledata.Generate(context.Background(), fixtureOptions)
		if fixture.err != nil {
			return
		}
		fixture.d.Name = ExampleName
		fixture.p, fixture.err = pipeline.Prepare(context.Background(), fixture.d, fixtureSettings(), nil)
	})
	if fixture.err != nil {
		t.Fatal(fixture.err)
	}
	p := *fixture.p
	p.Annotations = slices.Clone(p.Annotations)
	return fixture.d, &p
}

// uiApp is Fyne's test app with a UI goroutine of its own. Fyne's test
// driver runs the functions given to fyne.Do on the calling goroutine, so
// background jobs would touch widgets at the same time as each other and
// the test; here, as in the real driver, fyne.Do queues them for the one UI
// goroutine and fyne.DoAndWait waits for them.
type uiApp struct {
	fyne.App
	drv *uiDriver
}

func (a *uiApp) Driver() fyne.Driver { return a.drv }

func (a *uiApp) Quit() {
	a.drv.stopOnce.Do(func() { close(a.drv.stop) })
	a.App.Quit()
}

type uiDriver struct {
	fyne.Driver
	queue    chan func()
	stop     chan struct{}
	stopOnce sync.Once
	loopID   atomic.Uint64
}

// newUIApp starts a test app with a UI goroutine and makes it current.
func newUIApp() *uiApp {
	base := test.NewApp()
	base.Settings().SetTheme(look{})
	d := &uiDriver{Driver: base.Driver(), queue: make(chan func()), stop: make(chan struct{})}
	a := &uiApp{App: base, drv: d}
	fyne.SetCurrentApp(a)
	go func() {
		for {
			select {
			case f := <-d.queue:
				// Each function runs on a goroutine of its own, one at a
				// time, so that a test's t.FailNow inside one (which ends
				// its goroutine) does not end the UI goroutine.
				done := make(chan struct{})
				go func() {
					defer close(done)
					d.loopID.Store(goroutineID())
					f()
				}()
				<-done
			case <-d.stop:
				return
			}
		}
	}()
	return a
}

// DoFromGoroutine runs f on the UI goroutine; with wait it returns when f
// has run (at once when called on the UI goroutine itself).
func (d *uiDriver) DoFromGoroutine(f func(), wait bool) {
	if goroutineID() == d.loopID.Load() {
		f()
		return
	}
	if !wait {
		select {
		case d.queue <- f:
		case <-d.stop:
		}
		return
	}
	done := make(chan struct{})
	select {
	case d.queue <- func() { defer close(done); f() }:
		<-done
	case <-d.stop:
	}
}

// goroutineID returns the number of the calling goroutine, from the first
// line of its stack ("goroutine 7 [running]:").
func goroutineID() uint64 {
	var b [64]byte
	s := strings.TrimPrefix(string(b[:runtime.Stack(b[:], false)]), "goroutine ")
	id, _ := strconv.ParseUint(s[:strings.IndexByte(s, ' ')], 10, 64)
	return id
}

// newTestUI returns the window of a test app with a fake chooser; closing
// it at the end of the test stops the atlas view's work.
func newTestUI(t *testing.T, ch Chooser) *ui {
	t.Helper()
	a := newUIApp()
	var u *ui
	onUI(func() { u = newUI(a, ch, Options{Threads: 2}) })
	t.Cleanup(func() {
		var v *atlasView
		onUI(func() {
			v = u.atlas
			if v != nil {
				u.closeAtlas()
			}
		})
		if v != nil {
			v.jobs.wait()
			v.run.engine.Wait()
		}
		a.Quit()
	})
	return u
}

// openFixture shows the fixture atlas in u and waits for the first run and
// its scores.
func openFixture(t *testing.T, u *ui) *atlasView {
	t.Helper()
	d, p := preparedFixture(t)
	var v *atlasView
	onUI(func() {
		u.showAtlas(source{example: true}, d, p)
		v = u.atlas
		v.exampleOpts = fixtureOptions
	})
	waitForRun(t, v, 1)
	waitFor(t, "the first map's scores", 30*time.Second, func() bool { return v.st.scoresCurrent() })
	return v
}

// waitForRun waits until run number runs has ended.
func waitForRun(t *testing.T, v *atlasView, runs int) {
	t.Helper()
	waitFor(t, "the end of a run", 60*time.Second, func() bool {
		_, st := v.run.engine.Latest()
		return st.Runs == runs && !st.Running && v.st.run.Runs == runs && !v.st.run.Running
	})
}

// topDialog returns the dialog on top of the window, or nil.
func topDialog(u *ui) fyne.CanvasObject { return u.win.Canvas().Overlays().Top() }

// overlayText collects the text of the labels in an overlay.
func overlayText(o fyne.CanvasObject) string {
	var b strings.Builder
	walk(o, func(o fyne.CanvasObject) {
		switch w := o.(type) {
		case *widget.Label:
			b.WriteString(w.Text + "\n")
		case *widget.RichText:
			writeSegments(&b, w.Segments)
		}
	})
	return b.String()
}

// writeSegments writes the text of rich-text segments, lists included.
func writeSegments(b *strings.Builder, segs []widget.RichTextSegment) {
	for _, s := range segs {
		switch seg := s.(type) {
		case *widget.ListSegment:
			writeSegments(b, seg.Items)
		case *widget.ParagraphSegment:
			writeSegments(b, seg.Texts)
		default:
			b.WriteString(s.Textual())
		}
		b.WriteString("\n")
	}
}

// walk calls f with o and everything inside it.
func walk(o fyne.CanvasObject, f func(fyne.CanvasObject)) {
	f(o)
	switch w := o.(type) {
	case *fyne.Container:
		for _, c := range w.Objects {
			walk(c, f)
		}
	case fyne.Widget:
		for _, c := range test.WidgetRenderer(w).Objects() {
			walk(c, f)
		}
	}
}

// button returns the button labelled text inside o, or nil.
func button(o fyne.CanvasObject, text string) *widget.Button {
	var found *widget.Button
	walk(o, func(o fyne.CanvasObject) {
		if b, ok := o.(*widget.Button); ok && b.Text == text && found == nil {
			found = b
		}
	})
	return found
}

// entries returns the text entries inside o.
func entries(o fyne.CanvasObject) []*widget.Entry {
	var out []*widget.Entry
	walk(o, func(o fyne.CanvasObject) {
		if e, ok := o.(*widget.Entry); ok {
			out = append(out, e)
		}
	})
	return out
}

// tapDialog taps the button labelled text of the dialog on top.
func tapDialog(t *testing.T, u *ui, text string) {
	t.Helper()
	onUI(func() {
		d := topDialog(u)
		if d == nil {
			t.Fatalf("no dialog to tap %q in", text)
		}
		b := button(d, text)
		if b == nil {
			t.Fatalf("the dialog has no button %q: %s", text, overlayText(d))
		}
		test.Tap(b)
	})
}

// dialogSays waits for a dialog whose text holds every one of parts, then
// closes it.
func dialogSays(t *testing.T, u *ui, parts ...string) {
	t.Helper()
	var text string
	waitFor(t, "a dialog saying "+strings.Join(parts, ", "), 30*time.Second, func() bool {
		d := topDialog(u)
		if d == nil {
			return false
		}
		text = overlayText(d)
		for _, p := range parts {
			if !strings.Contains(text, p) {
				return false
			}
		}
		return true
	})
	tapDialog(t, u, "Close")
}

// noDialog fails when a dialog is shown.
func noDialog(t *testing.T, u *ui) {
	t.Helper()
	onUI(func() {
		if d := topDialog(u); d != nil {
			t.Fatalf("unexpected dialog: %s", overlayText(d))
		}
	})
}

var errTest = errors.New("test")
