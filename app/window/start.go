package window

import (
	"context"
	"errors"
	"fmt"
	"image/color"
	"path/filepath"
	"sync"
	"time"

	"fyne.io/fyne/v2"
	fynecanvas "fyne.io/fyne/v2/canvas"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/layout"
	"fyne.io/fyne/v2/theme"
	"fyne.io/fyne/v2/widget"

	"lodestone/compute/atlas"
	"lodestone/compute/ingest"
	"lodestone/compute/pipeline"
	"lodestone/internal/memstat"
	"lodestone/sampledata"
)

// showStart shows the start view: open a file or folder, the example atlas,
// recent files, and a hint that files can be dropped.
func (u *ui) showStart() {
	title := fynecanvas.NewText("Lodestone", theme.Color(theme.ColorNameForeground))
	title.TextSize = 34
	title.TextStyle = fyne.TextStyle{Bold: true}
	lead := widget.NewLabel("See the structure of a single-cell atlas: groups, paths, samples — and the genes that mark them.")
	lead.Wrapping = fyne.TextWrapWord

	openFile := widget.NewButtonWithIcon("Open a file…", theme.FileIcon(), u.askOpenFile)
	openFile.Importance = widget.HighImportance
	openFolder := widget.NewButtonWithIcon("Open a folder…", theme.FolderOpenIcon(), u.askOpenFolder)
	example := widget.NewButtonWithIcon("Open the example atlas", theme.MediaPlayIcon(), u.openExample)
	formats := widget.NewLabel("Matrix Market counts with their cell and gene label files (a folder opens in one step), " +
		"CSV or TSV tables, gzip-compressed or not, with an optional annotation table keyed by cell ID.")
	formats.Wrapping = fyne.TextWrapWord
	formats.Importance = widget.LowImportance
	drop := widget.NewLabel("…or drop files or a folder onto this window.")
	drop.Importance = widget.LowImportance

	items := []fyne.CanvasObject{title, lead, widget.NewSeparator(),
		container.NewGridWithColumns(3, openFile, openFolder, example), formats, drop}
	if rec := u.recent(); len(rec) > 0 {
		head := widget.NewLabelWithStyle("Opened lately", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
		items = append(items, widget.NewSeparator(), head)
		for _, p := range rec {
			p := p
			b := widget.NewButton(filepath.Base(p)+"   —   "+filepath.Dir(p), func() { u.openPath(p) })
			b.Alignment = widget.ButtonAlignLeading
			b.Importance = widget.LowImportance
			items = append(items, b)
		}
	}
	caution := widget.NewLabel("The map is for exploration, not for diagnosis: sizes of groups and distances between them " +
		"are not quantitative, and the picture depends on the settings (Help ▸ Reading the map).")
	caution.Wrapping = fyne.TextWrapWord
	caution.Importance = widget.LowImportance
	items = append(items, layout.NewSpacer(), caution)

	card := container.NewVBox(items...)
	band := fynecanvas.NewRectangle(ironOxide)
	band.SetMinSize(fyne.NewSize(10, 6))
	body := container.NewBorder(band, nil, nil, nil,
		container.NewCenter(container.New(&fixedWidth{width: 720}, container.NewPadded(card))))
	u.win.SetTitle("Lodestone")
	u.win.SetContent(body)
}

// fixedWidth lays out its objects stacked at a fixed width.
type fixedWidth struct{ width float32 }

func (f *fixedWidth) MinSize(objs []fyne.CanvasObject) fyne.Size {
	h := float32(0)
	for _, o := range objs {
		if s := o.MinSize(); s.Height > h {
			h = s.Height
		}
	}
	return fyne.NewSize(f.width, h)
}

func (f *fixedWidth) Layout(objs []fyne.CanvasObject, size fyne.Size) {
	for _, o := range objs {
		o.Move(fyne.NewPos(0, 0))
		o.Resize(size)
	}
}

// stageRow is one line of the loading view: a stage's label and bar.
type stageRow struct {
	label *widget.Label
	bar   *widget.ProgressBar
	mark  *fynecanvas.Text
}

// loadingView shows one progress bar per stage and a Cancel button.
type loadingView struct {
	rows    map[string]*stageRow
	order   []string
	elapsed *widget.Label
	started time.Time
	content fyne.CanvasObject
}

func newLoadingView(name string, cancel func()) *loadingView {
	lv := &loadingView{rows: map[string]*stageRow{}, started: time.Now()}
	stages := append([]struct{ Name, Label string }{{"read", "reading the files"}}, pipeline.Stages...)
	grid := container.New(layout.NewFormLayout())
	for _, st := range stages {
		r := &stageRow{label: widget.NewLabel(st.Label), bar: widget.NewProgressBar()}
		r.mark = fynecanvas.NewText("", ironOxide)
		lv.rows[st.Name] = r
		lv.order = append(lv.order, st.Name)
		grid.Add(container.NewHBox(container.NewGridWrap(fyne.NewSize(16, 16), r.mark), r.label))
		grid.Add(r.bar)
	}
	head := widget.NewLabelWithStyle("Opening "+name, fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	lv.elapsed = widget.NewLabel("")
	cancelBtn := widget.NewButtonWithIcon("Cancel", theme.CancelIcon(), cancel)
	box := container.NewVBox(head, grid, container.NewHBox(lv.elapsed, layout.NewSpacer(), cancelBtn))
	lv.content = container.NewCenter(container.New(&fixedWidth{width: 620}, container.NewPadded(box)))
	return lv
}

// set shows progress of a stage; earlier stages are marked done.
func (lv *loadingView) set(stage string, done, total int64) {
	r, ok := lv.rows[stage]
	if !ok {
		return
	}
	v := 1.0
	if total > 0 {
		v = float64(done) / float64(total)
	}
	r.bar.SetValue(v)
	r.mark.Text = "›"
	r.mark.Refresh()
	for _, name := range lv.order {
		if name == stage {
			break
		}
		if p := lv.rows[name]; p.bar.Value < 1 || p.mark.Text != "✓" {
			p.bar.SetValue(1)
			p.mark.Text = "✓"
			p.mark.Refresh()
		}
	}
	lv.elapsed.SetText(fmt.Sprintf("%.1f s · %s in memory", time.Since(lv.started).Seconds(), memstat.Format(memstat.Read().Resident)))
}

// progressRelay collects progress reports from worker goroutines and hands
// the newest one per stage to the UI at most 20 times a second.
type progressRelay struct {
	mu      sync.Mutex
	latest  map[string][2]int64
	order   []string
	pending bool
	apply   func(stage string, done, total int64)
}

func newProgressRelay(apply func(stage string, done, total int64)) *progressRelay {
	return &progressRelay{latest: map[string][2]int64{}, apply: apply}
}

func (p *progressRelay) report(stage string, done, total int64) {
	p.mu.Lock()
	if _, seen := p.latest[stage]; !seen {
		p.order = append(p.order, stage)
	}
	p.latest[stage] = [2]int64{done, total}
	if p.pending {
		p.mu.Unlock()
		return
	}
	p.pending = true
	p.mu.Unlock()
	time.AfterFunc(50*time.Millisecond, func() {
		p.mu.Lock()
		order := append([]string(nil), p.order...)
		latest := make(map[string][2]int64, len(p.latest))
		for k, v := range p.latest {
			latest[k] = v
		}
		p.pending = false
		p.mu.Unlock()
		fyne.Do(func() {
			for _, s := range order {
				v := latest[s]
				p.apply(s, v[0], v[1])
			}
		})
	})
}

// source says where an atlas comes from: a path, or the bundled example.
type source struct {
	path    string // empty for the example
	example bool
}

func (s source) name() string {
	if s.example {
		return ExampleName
	}
	return filepath.Base(s.path)
}

func (u *ui) openExample() { u.open(source{example: true}) }

func (u *ui) openPath(path string) {
	if isSession(path) {
		u.openSession(path)
		return
	}
	u.open(source{path: path})
}

// open loads an atlas in the background with a progress bar per stage, then
// shows it; errors come back in a dialog and leave the window as it was.
func (u *ui) open(src source) {
	if u.loadCancel != nil {
		u.loadCancel()
	}
	ctx, cancel := context.WithCancel(context.Background())
	u.loadCancel = cancel
	previous := u.win.Content()
	lv := newLoadingView(src.name(), cancel)
	u.win.SetContent(lv.content)
	relay := newProgressRelay(lv.set)
	settings := pipeline.Default()
	settings.Threads = u.opts.Threads

	go func() {
		d, err := readSource(ctx, src, relay.report)
		var prep *pipeline.Prepared
		if err == nil {
			prep, err = pipeline.Prepare(ctx, d, settings, relay.report)
		}
		fyne.Do(func() {
			if ctx.Err() != nil && u.loadCancel != nil && errors.Is(ctx.Err(), context.Canceled) {
				// cancelled: go back to what was shown before
				u.loadCancel = nil
				u.win.SetContent(previous)
				return
			}
			u.loadCancel = nil
			if err != nil {
				u.win.SetContent(previous)
				u.showError("Could not open "+src.name(), err)
				return
			}
			if !src.example {
				u.remember(src.path)
			}
			u.showAtlas(src, d, prep)
		})
	}()
}

// readSource reads the atlas a source names.
func readSource(ctx context.Context, src source, report func(string, int64, int64)) (*atlas.Dataset, error) {
	if src.example {
		opt := sampledata.DefaultOptions()
		opt.Progress = func(done, total int64) { report("read", done, total) }
		d, _, err := sampledata.Generate(ctx, opt)
		if err == nil {
			d.Name = ExampleName
		}
		return d, err
	}
	return ingest.Open(ctx, src.path, ingest.Options{Progress: func(done, total int64) { report("read", done, total) }})
}

// swatch returns a small filled square of colour c.
func swatch(c color.Color, size float32) *fynecanvas.Rectangle {
	r := fynecanvas.NewRectangle(c)
	r.SetMinSize(fyne.NewSize(size, size))
	r.CornerRadius = size / 4
	return r
}
