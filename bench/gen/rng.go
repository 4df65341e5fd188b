package gen

import "math/rand/v2"

// newRand returns the generator every function of this package draws from.
// The second PCG word is fixed so that a seed alone decides the output; the
// constant is arbitrary.
func newRand(seed uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, 0x6f72626974776174))
}
