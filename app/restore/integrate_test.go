package restore_test

import (
	"path/filepath"
	"reflect"
	"testing"

	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/compute/pipeline"
)

// TestRecomputeWithIntegration embeds a small example atlas with its runs
// integrated (non-default parameters, two columns), then recomputes the
// session's layout from the inputs: the integration is replayed from the
// stored settings, and the layout is the stored one bit for bit.
func TestRecomputeWithIntegration(t *testing.T) {
	dir := smallAtlas(t)
	path := filepath.Join(t.TempDir(), "map"+session.Extension)
	run(t, append([]string{"embed", "--in", dir, "--session", path, "--iterations", "150", "--attraction", "2",
		"--integrate", "batch,day", "--integrate-theta", "2.5,1", "--integrate-lambda", "1,0.5", "--integrate-clusters", "12",
		"--integrate-rounds", "4"}, prepFlags...)...)
	s := recomputeEqualsStored(t, path)
	want := &session.Integration{Columns: []string{"batch", "day"}, Theta: []float64{2.5, 1}, Lambda: []float64{1, 0.5},
		Clusters: 12, Sigma: 0.1, Rounds: 4, Iterations: 20, Tolerance: 1e-4}
	if !reflect.DeepEqual(s.Settings.Integrate, want) {
		t.Fatalf("stored integration %+v, want %+v", s.Settings.Integrate, want)
	}
}

// TestIntegrationSettingsRoundTrip stores settings with an integration and
// gets them back; settings without one store none.
func TestIntegrationSettingsRoundTrip(t *testing.T) {
	set := pipeline.Default()
	set.Integrate = pipeline.Integration{Columns: []string{"donor", "protocol"}, Theta: []float64{3, 1.5}, Lambda: []float64{0.5, 2},
		Clusters: 40, Sigma: 0.2, Rounds: 7, Iterations: 15, Tolerance: 1e-3, PooledGenes: true}
	p := &pipeline.Prepared{Settings: set, CellIDs: []string{"a", "b"}}
	s := restore.Capture(restore.Map{Prepared: p, Origin: restore.Origin{Path: "x"}, Initial: []float32{0, 0, 1, 1}, Layout: []float32{0, 0, 1, 1}})
	got, err := restore.Pipeline(writeAndRead(t, s).Settings)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.Integrate, set.Integrate) {
		t.Errorf("integration %+v, want %+v", got.Integrate, set.Integrate)
	}
	if plain := restore.Settings(pipeline.Default()); plain.Integrate != nil {
		t.Errorf("settings without integration store %+v", plain.Integrate)
	}
	if _, err := restore.Pipeline(session.Settings{Metric: "euclidean", Method: "auto", Integrate: &session.Integration{}}); err == nil {
		t.Error("an integration without columns was accepted")
	}
}
