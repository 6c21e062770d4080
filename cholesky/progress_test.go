package cholesky

import (
	"context"
	"errors"
	"math"
	"testing"
	"time"

	"github.com/kchol/kchol/kernels"
)

func TestProgressReportsEveryPhaseInOrder(t *testing.T) {
	points := uniformPoints(5000, 2, 3)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
	var seen []Progress
	f, err := New(context.Background(), points, 2, k, &Settings{Progress: func(p Progress) { seen = append(seen, p) }})
	if err != nil {
		t.Fatal(err)
	}
	phase, done := PhaseOrdering, int64(-1)
	var factorCalls int
	for _, p := range seen {
		switch {
		case p.Phase < phase:
			t.Fatalf("phase %v reported after %v", p.Phase, phase)
		case p.Phase > phase:
			if p.Done != 0 {
				t.Fatalf("phase %v starts at %d, want 0", p.Phase, p.Done)
			}
			phase, done = p.Phase, 0
		case p.Done < done:
			t.Fatalf("phase %v went back from %d to %d", p.Phase, done, p.Done)
		}
		done = p.Done
		if p.Phase == PhaseFactor {
			factorCalls++
			if p.Total != int64(f.N()) {
				t.Fatalf("factor total %d, want N = %d", p.Total, f.N())
			}
		}
	}
	if last := seen[len(seen)-1]; last.Phase != PhaseFactor || last.Done != last.Total {
		t.Errorf("last report %+v, want the factor phase complete", last)
	}
	if factorCalls < 3 {
		t.Errorf("only %d factor reports", factorCalls)
	}
}

func TestMaxMemoryRefuses(t *testing.T) {
	points := uniformPoints(3000, 2, 3)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
	f, err := New(context.Background(), points, 2, k, &Settings{Neighbors: 20})
	if err != nil {
		t.Fatal(err)
	}
	// The estimate must cover at least the values and row indices actually stored.
	if floor := int64(8*f.NNZ() + 4*f.StoredRows()); f.MemoryEstimate() < floor {
		t.Errorf("estimate %d below the stored arrays' %d bytes", f.MemoryEstimate(), floor)
	}
	_, err = New(context.Background(), points, 2, k, &Settings{Neighbors: 20, MaxMemory: f.MemoryEstimate() - 1})
	var memErr *MemoryError
	if !errors.As(err, &memErr) || memErr.Estimate != f.MemoryEstimate() {
		t.Fatalf("err = %v, want a MemoryError with the estimate %d", err, f.MemoryEstimate())
	}
	if _, err := New(context.Background(), points, 2, k, &Settings{Neighbors: 20, MaxMemory: f.MemoryEstimate()}); err != nil {
		t.Errorf("at the estimate: %v", err)
	}
}

func TestFlopsAndPotrfRate(t *testing.T) {
	points := uniformPoints(2000, 2, 3)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
	f, err := New(context.Background(), points, 2, k, &Settings{Neighbors: 10, Lambda: 1})
	if err != nil {
		t.Fatal(err)
	}
	// Without aggregation each column of m rows costs m³/3 + m² (by the definition in Flops).
	var want float64
	for j := range f.N() {
		m := float64(f.colStart[j+1] - f.colStart[j])
		want += m*m*m/3 + m*m
	}
	if got := f.Flops(); math.Abs(got-want) > 1e-9*want {
		t.Errorf("Flops = %g, want %g", got, want)
	}
	count, mean, median := f.SupernodeStats()
	if count != f.N() || mean != 1 || median != 11 {
		t.Errorf("stats %d %g %d, want N supernodes of one member and 11 rows", count, mean, median)
	}
	if rate := MeasurePotrf(40, time.Millisecond); !(rate > 0) || math.IsInf(rate, 0) {
		t.Errorf("Potrf rate %v", rate)
	}
}

func TestProgressDropsLateReports(t *testing.T) {
	// Two workers can hand in their reports out of order; the callback must never see Done
	// go back within a phase, while a new phase starts again from 0.
	var seen []Progress
	report := Settings{Progress: func(p Progress) { seen = append(seen, p) }}.progress()
	for _, p := range []Progress{{PhaseFactor, 0, 9}, {PhaseFactor, 5, 9}, {PhaseFactor, 3, 9}, {PhaseFactor, 9, 9}} {
		report(p)
	}
	want := []Progress{{PhaseFactor, 0, 9}, {PhaseFactor, 5, 9}, {PhaseFactor, 9, 9}}
	if len(seen) != len(want) {
		t.Fatalf("callback saw %v, want %v", seen, want)
	}
	for i := range want {
		if seen[i] != want[i] {
			t.Fatalf("callback saw %v, want %v", seen, want)
		}
	}
	seen = nil
	report = Settings{Progress: func(p Progress) { seen = append(seen, p) }}.progress()
	report(Progress{PhaseOrdering, 1, 1})
	report(Progress{PhasePattern, 0, 1})
	if len(seen) != 2 {
		t.Errorf("a new phase starting at 0 was dropped: %v", seen)
	}
}
