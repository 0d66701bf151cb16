package window

import (
	"context"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"

	"lodestone/app/session"
	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
	"lodestone/sampledata"
)

// The names of the tabs of the instrument column.
const (
	tabPaint   = "Paint"
	tabGroups  = "Groups"
	tabMarkers = "Markers"
	tabSweep   = "Sweep"
	tabAtlas   = "Atlas"
)

// atlasView is the view of an open atlas. It builds the panels, gives each
// the atlas state and the narrow dependencies it needs, lays them out, and
// owns the view's context, which closing the view cancels. The view
// itself does only what concerns several panels at once: sessions (saved,
// restored, recomputed, autosaved).
//
// The panels ("rooms"): mapPanel (map, tool strip, key at its side),
// runPanel (dial and run controls; the optimiser), paintPanel (paint and
// key), groupsPanel, markersPanel, sweepPanel, atlasPanel (summary),
// statusLine with mapScorer (scores of the map on screen), and exporter
// (figure and tables). They share atlasState and talk through its topics.
type atlasView struct {
	u     *ui
	st    *atlasState
	jobs  *viewJobs
	files *saver
	plots *plotWindows

	mapP    *mapPanel
	run     *runPanel
	paint   *paintPanel
	groups  *groupsPanel
	markers *markersPanel
	sweep   *sweepPanel
	samples *samplesPanel
	summary *atlasPanel
	status  *statusLine
	scorer  *mapScorer
	export  *exporter

	tabs *container.AppTabs
	root fyne.CanvasObject

	exampleOpts sampledata.Options // the example's options, when it is the example
	inputs      []session.Input    // the files read, with their hashes
	sessionPath string             // the session the view was opened from, if any
}

// newAtlasView returns the view of an atlas; p may be partial (a session's
// stored map before its atlas is prepared: no graph, affinities or
// expression), in which case the view is not ready.
func newAtlasView(u *ui, src source, d *atlas.Dataset, p *pipeline.Prepared) *atlasView {
	v := &atlasView{u: u, st: newAtlasState(src, d, p), jobs: newViewJobs(), exampleOpts: sampledata.DefaultOptions()}
	v.files = &saver{chooser: u.chooser, jobs: v.jobs, st: v.st, errs: u}
	v.plots = &plotWindows{app: u.app, files: v.files}

	v.paint = newPaintPanel(v.st, v.jobs, u, u.win)
	v.mapP = newMapPanel(v.st, v.paint.keyObject(), func() { v.groups.fromSelection() })
	v.run = newRunPanel(v.st, v.jobs, u)
	v.mapP.mapView.OnDrawn = v.run.frameDrawn
	v.groups = newGroupsPanel(v.st, u, u.win, v.mapP.selectCells,
		func() { v.paint.paintBy(groupsChoice) }, func() { v.reveal(tabGroups) })
	v.markers = newMarkersPanel(v.st, v.jobs, u, v.files, v.paint.showGene, v.plots)
	v.sweep = newSweepPanel(v.st, v.jobs, u, v.run)
	v.samples = newSamplesPanel(v.st, v.jobs, u, v.reprepared)
	v.summary = newAtlasPanel(v.st, v.samples)
	v.status = newStatusLine(v.st, v.jobs)
	v.scorer = newMapScorer(v.st, v.jobs)
	v.export = &exporter{st: v.st, view: v.mapP.mapView, files: v.files, errs: u, win: u.win}

	v.tabs = container.NewAppTabs(
		container.NewTabItem(tabPaint, v.paint.content()),
		container.NewTabItem(tabGroups, v.groups.content()),
		container.NewTabItem(tabMarkers, v.markers.content()),
		container.NewTabItem(tabSweep, v.sweep.content()),
		container.NewTabItem(tabAtlas, v.summary.content()),
	)
	column := container.New(&fixedWidth{width: 340}, container.NewBorder(v.run.content(), nil, nil, nil, v.tabs))
	v.root = container.NewBorder(nil, container.NewPadded(v.status.content()), nil, column, v.mapP.content())
	return v
}

// content returns the view's widgets.
func (v *atlasView) content() fyne.CanvasObject { return v.root }

// reprepared shows the atlas prepared again with other settings (its
// samples integrated or not): the same cells, annotation columns, groups
// and paint, new components, graph and affinities, and a fresh run from
// the new initial layout.
func (v *atlasView) reprepared(p *pipeline.Prepared) {
	v.st.attach(v.st.data, p)
	v.run.reset(p)
}

// reveal brings a tab of the instrument column to the front.
func (v *atlasView) reveal(name string) {
	for _, t := range v.tabs.Items {
		if t.Text == name {
			v.tabs.Select(t)
		}
	}
}

// open starts the view's work that lasts while it is open: the run's status
// and the autosave.
func (v *atlasView) open() {
	v.run.startTicker()
	v.jobs.run(func(ctx context.Context) {
		t := time.NewTicker(autosaveEvery)
		defer t.Stop()
		for {
			select {
			case <-ctx.Done():
				return
			case <-t.C:
				v.jobs.do(func() {
					if v.u.autosaveOn {
						v.autosave(false)
					}
				})
			}
		}
	})
}

// close stops the view's background work; nothing updates it afterwards.
func (v *atlasView) close() {
	if v.jobs.closed() {
		return
	}
	v.jobs.close()
	v.run.close()
	v.plots.closeAll()
}

// showAtlas replaces the window's content with the view of a prepared atlas
// and starts the first run.
func (u *ui) showAtlas(src source, d *atlas.Dataset, p *pipeline.Prepared) {
	if u.atlas != nil {
		u.atlas.close()
	}
	v := newAtlasView(u, src, d, p)
	u.atlas = v
	u.atlasChanged()
	u.win.SetTitle("Lodestone — " + src.name())
	u.win.SetContent(v.content())
	v.paint.paintDefault()
	v.open()
	v.run.restart()
	if !src.example {
		v.hashInputs()
	}
}

// closeAtlas closes the open atlas and shows the start view.
func (u *ui) closeAtlas() {
	if u.atlas == nil {
		return
	}
	u.atlas.close()
	u.atlas = nil
	u.atlasChanged()
	u.showStart()
}
