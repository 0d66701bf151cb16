package window

import (
	"context"
	"sync"

	"fyne.io/fyne/v2"
)

// viewJobs is the context of one atlas view and the background work that
// derives from it: loading the atlas behind a session, runs' bookkeeping,
// fidelity scores, marker genes, sweeps, clusters and exports. Closing the
// view cancels the context; a job's result reaches the UI through do, which
// drops it once the view is closed, so nothing updates a closed view.
type viewJobs struct {
	ctx    context.Context
	cancel context.CancelFunc
	wg     sync.WaitGroup
}

func newViewJobs() *viewJobs {
	ctx, cancel := context.WithCancel(context.Background())
	return &viewJobs{ctx: ctx, cancel: cancel}
}

// goCtx runs f in a goroutine of its own with ctx, which must derive from
// the view's context.
func (j *viewJobs) goCtx(ctx context.Context, f func(ctx context.Context)) {
	j.wg.Add(1)
	go func() {
		defer j.wg.Done()
		f(ctx)
	}()
}

// run runs f in a goroutine of its own with the view's context.
func (j *viewJobs) run(f func(ctx context.Context)) { j.goCtx(j.ctx, f) }

// child returns a context of its own for a job that can be cancelled
// alone (a sweep, a scoring that a newer one replaces).
func (j *viewJobs) child() (context.Context, context.CancelFunc) {
	return context.WithCancel(j.ctx)
}

// do runs f on the UI goroutine, unless the view is closed by then.
func (j *viewJobs) do(f func()) {
	fyne.Do(func() {
		if j.ctx.Err() == nil {
			f()
		}
	})
}

// closed reports whether the view was closed.
func (j *viewJobs) closed() bool { return j.ctx.Err() != nil }

// close cancels every job of the view.
func (j *viewJobs) close() { j.cancel() }

// wait blocks until every job has returned.
func (j *viewJobs) wait() { j.wg.Wait() }
