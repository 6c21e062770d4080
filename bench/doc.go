// Package bench is the measurement harness of kchol: point sets to factor (synthetic ones
// generated from a seed and a real one, the US ZIP code area centroids in testdata), dense
// references computed with gonum, and the accuracy and timing tables built from them.
//
// Every generator is deterministic: the same arguments and seed give the same bits on every
// platform (math/rand/v2 with rand.NewPCG(seed, seed)). Points are one flat row-major
// []float64 with dimension d, as everywhere in kchol.
package bench
