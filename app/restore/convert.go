package restore

import (
	"fmt"

	"lodestone/app/live"
	"lodestone/app/session"
	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
)

// This file converts between the computation's values and their stored
// form. A setting added to pipeline.Settings is stored by adding a field to
// session.Settings (with omitempty, its zero value meaning the behaviour of
// sessions written before it existed) and one line to each of Settings and
// Pipeline.

// Settings returns pipeline settings in the form a session stores.
func Settings(p pipeline.Settings) session.Settings {
	return session.Settings{
		MinGenes: p.Prep.QC.MinGenes, MinCells: p.Prep.QC.MinCells, MinCounts: p.Prep.QC.MinCounts,
		MaxCounts: p.Prep.QC.MaxCounts, MaxMitoFraction: p.Prep.QC.MaxMitoFraction,
		Target: p.Prep.Target, Genes: p.Prep.Genes,
		Components: p.Prep.PCA.Components, Oversample: p.Prep.PCA.Oversample,
		PowerIterations: p.Prep.PCA.PowerIterations, Standardize: p.Prep.PCA.Standardize,
		Perplexity: p.Perplexity, Neighbors: p.Neighbors, Metric: metricName(p.Metric), Method: methodName(p.Method),
		Uniform: p.Uniform, Init: string(p.Init), Seed: p.Seed, Threads: p.Threads,
		Integrate: integration(p.Integrate),
	}
}

// integration returns the stored form of an integration; nil when it is
// off.
func integration(in pipeline.Integration) *session.Integration {
	if !in.On() {
		return nil
	}
	return &session.Integration{Columns: in.Columns, Theta: in.Theta, Lambda: in.Lambda, Clusters: in.Clusters,
		Sigma: in.Sigma, Rounds: in.Rounds, Iterations: in.Iterations, Tolerance: in.Tolerance, PooledGenes: in.PooledGenes}
}

// Pipeline returns stored settings as pipeline settings; it fails, wrapping
// session.ErrCorrupt, on a metric or search method it does not know.
func Pipeline(s session.Settings) (pipeline.Settings, error) {
	p := pipeline.Default()
	p.Prep.QC.MinGenes, p.Prep.QC.MinCells = s.MinGenes, s.MinCells
	p.Prep.QC.MinCounts, p.Prep.QC.MaxCounts, p.Prep.QC.MaxMitoFraction = s.MinCounts, s.MaxCounts, s.MaxMitoFraction
	p.Prep.Target, p.Prep.Genes = s.Target, s.Genes
	p.Prep.PCA.Components, p.Prep.PCA.Oversample = s.Components, s.Oversample
	p.Prep.PCA.PowerIterations, p.Prep.PCA.Standardize = s.PowerIterations, s.Standardize
	p.Perplexity, p.Neighbors, p.Uniform = s.Perplexity, s.Neighbors, s.Uniform
	p.Init, p.Seed, p.Threads = pipeline.Init(s.Init), s.Seed, s.Threads
	if in := s.Integrate; in != nil {
		if len(in.Columns) == 0 {
			return p, fmt.Errorf("%w: an integration without batch columns", session.ErrCorrupt)
		}
		p.Integrate = pipeline.Integration{Columns: in.Columns, Theta: in.Theta, Lambda: in.Lambda, Clusters: in.Clusters,
			Sigma: in.Sigma, Rounds: in.Rounds, Iterations: in.Iterations, Tolerance: in.Tolerance, PooledGenes: in.PooledGenes}
	}
	var ok bool
	if p.Metric, ok = metrics[s.Metric]; !ok {
		return p, fmt.Errorf("%w: unknown metric %q", session.ErrCorrupt, s.Metric)
	}
	if p.Method, ok = methods[s.Method]; !ok {
		return p, fmt.Errorf("%w: unknown search method %q", session.ErrCorrupt, s.Method)
	}
	return p, nil
}

var metrics = map[string]neighbors.Metric{"euclidean": neighbors.Euclidean, "cosine": neighbors.Cosine}
var methods = map[string]neighbors.Method{"auto": neighbors.Auto, "exact": neighbors.ExactSearch, "approximate": neighbors.ApproximateSearch}

func metricName(m neighbors.Metric) string {
	for k, v := range metrics {
		if v == m {
			return k
		}
	}
	return "euclidean"
}

func methodName(m neighbors.Method) string {
	for k, v := range methods {
		if v == m {
			return k
		}
	}
	return "auto"
}

// History returns a history of runs in the form a session stores.
func History(h []live.Step) []session.Step {
	out := make([]session.Step, len(h))
	for i, s := range h {
		out[i] = session.Step{Kind: string(s.Kind), Attraction: session.Attraction(s.Attraction), Iterations: s.Iterations,
			Done: s.Done, Setting: s.Setting, Compact: s.Compact, Tail: s.Tail, Settled: s.Settled}
	}
	return out
}

// Steps returns the stored history of runs of s.
func Steps(s *session.Session) []live.Step {
	out := make([]live.Step, len(s.History))
	for i, st := range s.History {
		out[i] = live.Step{Kind: live.StepKind(st.Kind), Attraction: float64(st.Attraction), Iterations: st.Iterations,
			Done: st.Done, Setting: st.Setting, Compact: st.Compact, Tail: st.Tail, Settled: st.Settled}
	}
	return out
}

// Columns returns annotation columns in the form a session stores (sharing
// their codes and values).
func Columns(cols []atlas.Column) []session.Column {
	out := make([]session.Column, len(cols))
	for i, c := range cols {
		out[i] = session.Column{Name: c.Name, Kind: c.Kind.String(), Levels: c.Levels, Codes: c.Codes, Values: c.Values}
	}
	return out
}

// Annotations returns the stored annotation columns of s (sharing their
// codes and values).
func Annotations(s *session.Session) []atlas.Column {
	out := make([]atlas.Column, len(s.Columns))
	for i, c := range s.Columns {
		k := atlas.Continuous
		if c.Kind == "categorical" {
			k = atlas.Categorical
		}
		out[i] = atlas.Column{Name: c.Name, Kind: k, Levels: c.Levels, Codes: c.Codes, Values: c.Values}
	}
	return out
}
