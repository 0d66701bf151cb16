package pipeline

import (
	"context"
	"fmt"
	"strings"

	"lodestone/compute/atlas"
	"lodestone/compute/integrate"
	"lodestone/compute/quality"
)

// StageIntegrate is the name under which Features reports the integration
// of the components.
const StageIntegrate = "integrate"

// Integration says whether and how the principal components are corrected
// for the samples (batches) the cells came from, by Harmony (package
// integrate). The zero value integrates nothing.
type Integration struct {
	// Columns names the categorical annotation columns that name the
	// batches (e.g. donor, then protocol); empty means no integration.
	Columns []string
	// Theta and Lambda hold the diversity penalty θ and the ridge penalty λ
	// of each column, in the order of Columns; a missing entry or 0 takes
	// integrate.DefaultTheta or integrate.DefaultLambda (θ = 0 is not
	// offered: without the penalty the clusters need not mix the batches).
	Theta, Lambda []float64
	// Clusters, Sigma, Rounds, Iterations and Tolerance are those of
	// integrate.Options; 0 takes its default.
	Clusters   int
	Sigma      float64
	Rounds     int
	Iterations int
	Tolerance  float64
	// PooledGenes selects the highly variable genes on all cells pooled.
	// By default, when integrating, they are selected within each batch of
	// the first column and combined (prep.SelectGenesWithin), so that genes
	// that differ only between batches do not drive the components.
	PooledGenes bool
}

// geneBatches returns the batch codes of d's cells for the gene selection
// within batches (the first column's), or nil when the genes are pooled.
// The column was checked by CheckIntegration.
func (in Integration) geneBatches(d *atlas.Dataset) []int32 {
	if !in.On() || in.PooledGenes {
		return nil
	}
	return findColumn(d.Annotations, in.Columns[0]).Codes
}

// On reports whether the integration is asked for.
func (in Integration) On() bool { return len(in.Columns) > 0 }

// covariates returns the batch columns of the cells described by cols,
// checked by integrate.NewCovariate, with the penalties of in.
func (in Integration) covariates(cols []atlas.Column) ([]integrate.Covariate, error) {
	out := make([]integrate.Covariate, len(in.Columns))
	for c, name := range in.Columns {
		col := findColumn(cols, name)
		if col == nil {
			return nil, &integrate.BatchError{Column: name, Err: integrate.ErrNoColumn, Detail: "columns: " + columnNames(cols)}
		}
		cv, err := integrate.NewCovariate(col)
		if err != nil {
			return nil, err
		}
		if c < len(in.Theta) && in.Theta[c] > 0 {
			cv.Theta = in.Theta[c]
		}
		if c < len(in.Lambda) && in.Lambda[c] > 0 {
			cv.Lambda = in.Lambda[c]
		}
		out[c] = cv
	}
	return out, nil
}

// CheckIntegration checks, before any computation, that the columns of in
// can name batches among all the cells of d: each exists, is categorical,
// has a value for every cell, at least two levels and no level with fewer
// than integrate.MinBatchCells cells. The same checks run again on the
// cells quality control keeps. It returns nil when in is off, and otherwise
// an *integrate.BatchError naming the column and the problem.
func CheckIntegration(d *atlas.Dataset, in Integration) error {
	if !in.On() {
		return nil
	}
	seen := map[string]bool{}
	for _, name := range in.Columns {
		if seen[name] {
			return &integrate.BatchError{Column: name, Err: integrate.ErrRepeated}
		}
		seen[name] = true
	}
	_, err := in.covariates(d.Annotations)
	return err
}

// integrateFeatures corrects out.Features for the batches named by s, as
// Features' last stage.
func integrateFeatures(ctx context.Context, out *Prepared, s Settings, report func(stage string, done, total int64)) error {
	in := s.Integrate
	covs, err := in.covariates(out.Annotations)
	if err != nil {
		return err
	}
	o := integrate.Options{
		Clusters: in.Clusters, Sigma: in.Sigma, Rounds: in.Rounds, Iterations: in.Iterations, Tolerance: in.Tolerance,
		Seed: s.Seed, Threads: s.Threads,
		Progress: func(done, total int64) { report(StageIntegrate, done, total) },
	}.WithDefaults()
	res, err := integrate.Harmony(ctx, out.Features, covs, o)
	if err != nil {
		return fmt.Errorf("integration: %w", err)
	}
	out.Uncorrected = out.Features
	out.Features = res.Corrected
	// Record the parameters as used, defaults resolved, so that a session
	// replays them even if the defaults change.
	used := Integration{Columns: in.Columns, Clusters: res.Clusters, Sigma: o.Sigma, Rounds: o.Rounds, Iterations: o.Iterations,
		Tolerance: o.Tolerance, PooledGenes: in.PooledGenes}
	for _, cv := range covs {
		used.Theta = append(used.Theta, cv.Theta)
		used.Lambda = append(used.Lambda, cv.Lambda)
	}
	out.Settings.Integrate = used
	out.Integrated = &IntegrationReport{Columns: in.Columns, Clusters: res.Clusters, Rounds: res.Rounds, Converged: res.Converged}
	if !res.Converged {
		out.Notes = append(out.Notes, fmt.Sprintf("integration by %s stopped after %d rounds before the objective settled",
			strings.Join(in.Columns, " and "), res.Rounds))
	}
	return nil
}

// IntegrationReport says how the integration of a Prepared went.
type IntegrationReport struct {
	Columns   []string // the batch columns
	Clusters  int      // Harmony's clusters
	Rounds    int      // rounds of clustering and correction run
	Converged bool     // whether the objective settled within the tolerance
}

// MixingScores are the mixing scores of one map: the batch (and type)
// mixing among the neighbours in the map and in the features the map was
// computed from (the corrected components when integrated).
type MixingScores struct {
	Column, Types string
	Map, Space    quality.MixingScores
}

// Mixing scores how mixed the levels of the annotation column batch are
// among the neighbours of sampled cells in layout and in p.Features, and
// when types is not empty the same for that column (how well types stay
// apart), with the sample the fidelity scores use (o.Sample cells drawn
// with o.Seed, quality.DefaultFidelitySample when 0). Both columns must be
// categorical with at least two levels among the cells; otherwise Mixing
// returns an *integrate.BatchError naming the column.
func Mixing(ctx context.Context, p *Prepared, layout []float32, batch, types string, o quality.MixingOptions) (MixingScores, error) {
	out := MixingScores{Column: batch, Types: types}
	o, err := MixingLabels(p, batch, types, o)
	if err != nil {
		return out, err
	}
	if out.Map, err = quality.MapMixing(ctx, layout, o); err != nil {
		return out, err
	}
	out.Space, err = quality.SpaceMixing(ctx, p.Features, o)
	return out, err
}

// MixingLabels returns o with the codes of the annotation columns batch and
// types (when not empty) of p as its Batches and Types, for scores of the
// mixing of several maps of one preparation (quality.MapMixing), as Mixing
// scores one. Both columns must be categorical with at least two levels
// among the cells; otherwise MixingLabels returns an *integrate.BatchError
// naming the column.
func MixingLabels(p *Prepared, batch, types string, o quality.MixingOptions) (quality.MixingOptions, error) {
	labels := func(name string) ([]int32, error) {
		c := findColumn(p.Annotations, name)
		switch {
		case c == nil:
			return nil, &integrate.BatchError{Column: name, Err: integrate.ErrNoColumn, Detail: "columns: " + columnNames(p.Annotations)}
		case c.Kind != atlas.Categorical:
			return nil, &integrate.BatchError{Column: name, Err: integrate.ErrNotCategorical}
		}
		used := 0
		for _, n := range c.Counts() {
			if n > 0 {
				used++
			}
		}
		if used < 2 {
			return nil, &integrate.BatchError{Column: name, Err: integrate.ErrOneBatch}
		}
		return c.Codes, nil
	}
	var err error
	if o.Batches, err = labels(batch); err != nil {
		return o, err
	}
	if types != "" {
		if o.Types, err = labels(types); err != nil {
			return o, err
		}
	}
	return o, nil
}

func findColumn(cols []atlas.Column, name string) *atlas.Column {
	for i := range cols {
		if cols[i].Name == name {
			return &cols[i]
		}
	}
	return nil
}

func columnNames(cols []atlas.Column) string {
	names := make([]string, len(cols))
	for i, c := range cols {
		names[i] = fmt.Sprintf("%q", c.Name)
	}
	if len(names) == 0 {
		return "none"
	}
	return strings.Join(names, ", ")
}
