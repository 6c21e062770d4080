package cholesky

import (
	"math/rand/v2"
	"slices"
	"time"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// Flops returns the floating-point operations of the factor phase as counted for its
// throughput: u³/3 for the Cholesky factorisation of each supernode's u×u block and m² for
// each member's triangular solve of length m. Filling the blocks with kernel values is not
// counted.
func (f *Factor) Flops() float64 {
	var total float64
	for s := range f.Supernodes() {
		u := float64(f.superRowStart[s+1] - f.superRowStart[s])
		total += u * u * u / 3
		for _, k := range f.members[f.memberStart[s]:f.memberStart[s+1]] {
			m := float64(f.colStart[k+1] - f.colStart[k])
			total += m * m
		}
	}
	return total
}

// SupernodeStats returns the number of supernodes, their mean number of members and the
// median size of their row sets.
func (f *Factor) SupernodeStats() (count int, meanMembers float64, medianRows int) {
	count = f.Supernodes()
	sizes := make([]int, count)
	for s := range count {
		sizes[s] = int(f.superRowStart[s+1] - f.superRowStart[s])
	}
	slices.Sort(sizes)
	return count, float64(f.n) / float64(count), sizes[count/2]
}

// MemoryEstimate returns the estimate, in bytes, of the memory the factor holds plus the
// workspaces its construction used; New compares it with Settings.MaxMemory.
func (f *Factor) MemoryEstimate() int64 { return f.memory }

// MeasurePotrf returns the rate, in GFLOP/s (10⁹ · u³/3 per second), at which gonum's
// lapack64.Potrf factors u×u symmetric positive definite blocks on one goroutine, measured
// for at least the given duration. It is the yardstick for the factor phase's throughput.
// It panics if u < 1.
func MeasurePotrf(u int, duration time.Duration) float64 {
	if u < 1 {
		panic("cholesky: block size < 1")
	}
	// A well-conditioned SPD block: B Bᵀ/u + I for a random B.
	rng := rand.New(rand.NewPCG(1, 1))
	b := make([]float64, u*u)
	for i := range b {
		b[i] = rng.NormFloat64()
	}
	spd := make([]float64, u*u)
	for i := range u {
		for j := range u {
			var s float64
			for k := range u {
				s += b[i*u+k] * b[j*u+k]
			}
			spd[i*u+j] = s / float64(u)
		}
		spd[i*u+i]++
	}
	work := make([]float64, u*u)
	runs := 0
	start := time.Now()
	for runs == 0 || time.Since(start) < duration {
		copy(work, spd)
		if _, ok := lapack64.Potrf(blas64.Symmetric{Uplo: blas.Lower, N: u, Stride: u, Data: work}); !ok {
			panic("cholesky: the test block is not positive definite")
		}
		runs++
	}
	elapsed := time.Since(start).Seconds()
	fu := float64(u)
	return float64(runs) * fu * fu * fu / 3 / elapsed / 1e9
}
