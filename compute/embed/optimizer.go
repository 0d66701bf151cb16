package embed

import (
	"context"
	"math"
	"time"
)

// exactBelow is the number of points under which the repulsion is summed
// exactly: there the O(N²) sum costs less than the interpolation grid.
const exactBelow = 1000

// stepCap bounds each point's step per iteration, as a multiple of the
// layout's root-mean-square radius. Normal steps stay far below it; it only
// holds back the rare point that a large gain and a strong attractive pull
// would otherwise throw far outside the map.
const stepCap = 0.5

// settleAfter is the number of iterations before a run may count as settled:
// after a restart the steps start small and grow for a few tens of
// iterations while momentum builds up.
const settleAfter = 30

// settleEvery is the number of iterations between two measurements of the
// layout's motion (see SettledMotion).
const settleEvery = 10

// klEvery is the least time between two KL estimates of the snapshots, and
// klEveryIterations the least number of iterations: where an iteration
// takes most of a second (a million points), the estimate's logarithms
// would otherwise be paid every other iteration.
const (
	klEvery           = time.Second
	klEveryIterations = 10
)

// Gains and momentum (van der Maaten & Hinton 2008; common practice for the
// values).
const (
	gainUp        = 0.2
	gainDown      = 0.8
	gainMin       = 0.01
	earlyMomentum = 0.5
	lateMomentum  = 0.8
)

// optimizer holds the state of one run. Its goroutines (team) run until
// close; an iteration allocates nothing.
type optimizer struct {
	a       *affinities
	p       Params
	n       int
	team    *team
	attract *attraction
	exact   *exactRepulsion // below exactBelow points
	y       []float64       // layout
	y32     []float32       // layout rounded to float32, for the attraction
	upd     []float64       // last update (momentum)
	gains   []float64       // per-coordinate gains
	attr    []float64       // attractive sums
	rep     []float64       // repulsive sums
	fft     *fftRepulsion
	logs    []float64    // per block: Σ p log(1 + d²)
	plogp   []float64    // per block: Σ p log p, computed with the first KL
	sums    [][4]float64 // per block scratch
	boxes   [][4]float64 // per block bounding boxes
	bounds  [4]float64   // xmin, xmax, ymin, ymax
	rms     float64      // root-mean-square distance from the centre
	shape   []float32    // the layout's shape (y / rms) at the last measurement of its motion
	settled bool         // the last measurement found the layout settled

	// The current step's factors, the centre and scale of centre and
	// measureMotion, for the loops' bodies (made once, in loops).
	attScale, momentum, eta, maxStep, invZ float64
	mx, my, scale                          float64
	loops                                  struct{ step, centre, motion func(lo, hi, block int) }

	start *Start // the first iteration's forces, computed ahead (Params.Start), until used
}

func newOptimizer(a *affinities, y []float64, p Params) *optimizer {
	n := a.Rows
	tm := newTeam(p.Threads)
	o := &optimizer{
		a: a, p: p, n: n, y: y, team: tm, attract: newAttraction(tm, a.CSR, p.Tail),
		y32:   make([]float32, 2*n),
		upd:   make([]float64, 2*n),
		gains: make([]float64, 2*n),
		attr:  make([]float64, 2*n),
		rep:   make([]float64, 2*n),
		logs:  make([]float64, p.Threads),
		plogp: make([]float64, p.Threads),
		sums:  make([][4]float64, p.Threads),
		boxes: make([][4]float64, p.Threads),
	}
	for i := range o.gains {
		o.gains[i] = 1
	}
	o.loops.step, o.loops.centre, o.loops.motion = o.stepBlock, o.centreBlock, o.motionBlock
	if n >= exactBelow {
		o.fft = newFFTRepulsion(tm, p.Tail)
	} else {
		o.exact = newExactRepulsion(tm, p.Tail)
	}
	var sx, sy float64
	for i := 0; i < n; i++ {
		sx += y[2*i]
		sy += y[2*i+1]
	}
	o.centre(sx/float64(n), sy/float64(n))
	return o
}

// close ends the optimiser's goroutines.
func (o *optimizer) close() {
	o.team.close()
}

// cancelled returns a function that reports, without blocking, whether
// ctx is done.
func cancelled(ctx context.Context) func() bool {
	done := ctx.Done()
	return func() bool {
		select {
		case <-done:
			return true
		default:
			return false
		}
	}
}

// run iterates and publishes; see Run.
func (o *optimizer) run(ctx context.Context, publish func(Snapshot)) ([]float32, error) {
	stop := cancelled(ctx)
	var lastPublish, lastKL time.Time
	lastKLAt := 0
	kl := math.NaN()
	total := o.p.Iterations
	for t := 0; t < total; t++ {
		if err := ctx.Err(); err != nil {
			return o.layout(), err
		}
		rho, momentum := o.p.Attraction, lateMomentum
		if t < o.p.EarlyIterations {
			rho, momentum = o.p.EarlyExaggeration, earlyMomentum
		}
		eta := o.p.LearningRate
		if eta == 0 {
			eta = float64(o.n) / rho
		}
		last := t == total-1
		snap := publish != nil && (t == 0 || last || time.Since(lastPublish) >= o.p.SnapshotEvery)
		// The first snapshot goes out as early as possible, without the KL
		// estimate's logarithms; later ones carry the latest estimate, and
		// a new one is made at least klEvery and klEveryIterations after
		// the previous, since the logarithms cost several times as much as
		// the rest of the attractive pass.
		withKL := snap && t > 0 && (last || time.Since(lastKL) >= klEvery && t-lastKLAt >= klEveryIterations)
		k, ok := o.iterate(rho, momentum, eta, withKL, stop)
		if !ok {
			return o.layout(), ctx.Err()
		}
		if withKL {
			kl, lastKL, lastKLAt = k, time.Now(), t
		}
		if (t+1)%settleEvery == 0 {
			o.measureMotion()
		}
		settled := o.settled && t+1 >= settleAfter
		end := o.p.StopSettled && settled
		if publish != nil && (snap || end) {
			publish(Snapshot{Layout: o.layout(), Iteration: t + 1, Iterations: total, KL: kl,
				Attraction: o.p.Attraction, Settled: settled, Done: last || end})
			lastPublish = time.Now()
		}
		if end {
			break
		}
	}
	return o.layout(), nil
}

// layout returns a float32 copy of the current layout.
func (o *optimizer) layout() []float32 {
	return append([]float32(nil), o.y32...)
}

// iterate performs one gradient step with attraction rho, momentum and
// learning rate eta. With wantKL it also returns the KL divergence of the
// layout before the step (NaN otherwise). It returns false, with the layout
// unchanged, when stop reported true.
func (o *optimizer) iterate(rho, momentum, eta float64, wantKL bool, stop func() bool) (float64, bool) {
	var kl, z float64
	if st := o.start; st != nil && !wantKL {
		// The forces on this very layout, computed ahead by PrepareStart.
		copy(o.attr, st.attr)
		copy(o.rep, st.rep)
		kl, z = math.NaN(), st.z
	} else {
		var ok bool
		if kl, z, ok = o.forces(wantKL, stop); !ok {
			return 0, false
		}
	}
	o.start = nil
	o.step(rho, momentum, eta, z)
	return kl, true
}

// forces computes the attractive sums (o.attr) and the repulsive sums
// (o.rep) of the layout and returns Z, with wantKL also the KL divergence
// of the layout (NaN otherwise). It returns false when stop reported true.
func (o *optimizer) forces(wantKL bool, stop func() bool) (kl, z float64, ok bool) {
	var logs []float64
	if wantKL {
		logs = o.logs
		clear(logs)
	}
	var plogp []float64
	if wantKL && !o.a.known {
		plogp = o.plogp
	}
	if !o.attract.sums32(o.attr, o.y32, stop) {
		return 0, 0, false
	}
	if wantKL && !o.attract.sums(nil, o.y, logs, plogp, stop) {
		return 0, 0, false
	}
	if plogp != nil {
		o.a.setEntropy(plogp)
	}
	if o.fft == nil {
		z = o.exact.compute(o.rep, o.y)
	} else if z, ok = o.fft.compute(o.rep, o.y, o.bounds, stop); !ok {
		return 0, 0, false
	}
	kl = math.NaN()
	if wantKL {
		kl = o.a.kl(logs, z, o.p.Tail)
	}
	return kl, z, true
}

// step moves the layout by one gradient step from the forces in o.attr and
// o.rep and their Z, with attraction rho, momentum and learning rate eta,
// and centres it.
func (o *optimizer) step(rho, momentum, eta, z float64) {
	// Step: g = ρ/ΣP · attr − rep/Z, the gradient without its factor 4.
	o.attScale, o.momentum, o.eta, o.maxStep = rho/o.a.sum, momentum, eta, stepCap*o.rms
	o.invZ = 1 / z
	clear(o.sums)
	o.team.For(o.n, o.loops.step)
	var sx, sy float64
	for _, s := range o.sums {
		sx += s[0]
		sy += s[1]
	}
	o.centre(sx/float64(o.n), sy/float64(o.n))
}

// stepBlock takes the step of the points [lo, hi): with att = o.attScale (ρ/ΣP)
// and 1/Z = o.invZ, g = att·attr − rep/Z, the gains, the momentum and the
// cap on the step's length, and sums the new coordinates into sums[block].
func (o *optimizer) stepBlock(lo, hi, block int) {
	att, invZ, maxStep, momentum, eta := o.attScale, o.invZ, o.maxStep, o.momentum, o.eta
	var sx, sy float64
	for i := lo; i < hi; i++ {
		var u [2]float64
		for c := 0; c < 2; c++ {
			k := 2*i + c
			g := att*o.attr[k] - invZ*o.rep[k]
			gain := o.gains[k]
			if g*o.upd[k] < 0 {
				gain += gainUp
			} else {
				gain = max(gain*gainDown, gainMin)
			}
			o.gains[k] = gain
			u[c] = momentum*o.upd[k] - eta*gain*g
		}
		l := math.Sqrt(u[0]*u[0] + u[1]*u[1])
		if l > maxStep {
			u[0], u[1] = u[0]*maxStep/l, u[1]*maxStep/l
		}
		o.upd[2*i], o.upd[2*i+1] = u[0], u[1]
		o.y[2*i] += u[0]
		o.y[2*i+1] += u[1]
		sx += o.y[2*i]
		sy += o.y[2*i+1]
	}
	o.sums[block] = [4]float64{sx, sy}
}

// measureMotion measures how far the layout's shape moved since the last
// measurement, settleEvery iterations before, and records whether it
// counts as settled (see SettledMotion). The layout is centred; its shape
// is y / rms.
func (o *optimizer) measureMotion() {
	o.scale = 1 / o.rms
	if o.rms == 0 {
		o.scale = 1
	}
	first := o.shape == nil
	if first {
		o.shape = make([]float32, len(o.y))
	}
	clear(o.sums)
	o.team.For(o.n, o.loops.motion)
	if first {
		return
	}
	var d float64
	for _, s := range o.sums {
		d += s[0]
	}
	o.settled = d/float64(o.n) < SettledMotion
}

// motionBlock records the shape of the points [lo, hi) at scale o.scale
// and sums their motion since the last record into sums[block].
func (o *optimizer) motionBlock(lo, hi, block int) {
	scale := o.scale
	var d float64
	for i := lo; i < hi; i++ {
		x, y := float32(o.y[2*i]*scale), float32(o.y[2*i+1]*scale)
		dx, dy := float64(x-o.shape[2*i]), float64(y-o.shape[2*i+1])
		d += math.Sqrt(dx*dx + dy*dy)
		o.shape[2*i], o.shape[2*i+1] = x, y
	}
	o.sums[block][0] = d
}

// centre subtracts (mx, my) from every point, and updates the bounding box
// and the root-mean-square radius.
func (o *optimizer) centre(mx, my float64) {
	clear(o.sums)
	for b := range o.boxes {
		o.boxes[b] = [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
	}
	o.mx, o.my = mx, my
	o.team.For(o.n, o.loops.centre)
	o.bounds = [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
	var r2 float64
	for b, box := range o.boxes {
		o.bounds[0], o.bounds[1] = min(o.bounds[0], box[0]), max(o.bounds[1], box[1])
		o.bounds[2], o.bounds[3] = min(o.bounds[2], box[2]), max(o.bounds[3], box[3])
		r2 += o.sums[b][3]
	}
	o.rms = math.Sqrt(r2 / float64(o.n))
}

// centreBlock is centre for the points [lo, hi): it moves them, rounds
// them to float32 and records their box and Σ|y|² for the block.
func (o *optimizer) centreBlock(lo, hi, block int) {
	mx, my := o.mx, o.my
	box := [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
	var r2 float64
	for i := lo; i < hi; i++ {
		x, y := o.y[2*i]-mx, o.y[2*i+1]-my
		o.y[2*i], o.y[2*i+1] = x, y
		o.y32[2*i], o.y32[2*i+1] = float32(x), float32(y)
		box[0], box[1] = min(box[0], x), max(box[1], x)
		box[2], box[3] = min(box[2], y), max(box[3], y)
		r2 += x*x + y*y
	}
	o.boxes[block] = box
	o.sums[block][3] = r2
}
