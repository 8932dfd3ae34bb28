// Package stream is the simulation's random number generator: the same
// generator, and the same normal and exponential draws, as math/rand/v2's
// Rand over a *rand.PCG, bit for bit, as a concrete type whose methods
// the compiler can inline.
//
// A rand.Rand reaches its source through an interface, so every draw is
// an indirect call that loads the generator's 128-bit state from memory
// and stores it back. The samplers draw millions of values a second on
// the draw-by-draw path (gamma, Weibull, regression, censoring), where
// that call is a sizeable share of the cost. PCG's step (a 128-bit
// multiply-add and the DXSM output function) inlines here. NormFloat64
// and ExpFloat64 are too large to inline, so their ziggurat's fast path
// (about 97% of normal and 98% of exponential draws, counted in the
// tests) is also offered on its own, NormFast and ExpFast, with NormFrom
// and ExpFrom to finish the rest: a hot loop copies the generator to a
// local, so its state stays in registers, and hands it back around the
// slow path (see the family package's sumStdNormals).
//
// Keeping the library's numbers is the point: a study's seed gives the
// same draws as before this package existed, so no result changed.
// TestSameDrawsAsTheLibrary checks every method against math/rand/v2
// draw for draw, and TestTablesAreTheLibrarys checks the ziggurat's
// tables against the toolchain's own source (they are copied from it,
// with its BSD licence notice, and regenerated with -update).
//
// References: M. E. O'Neill (2014), "PCG: A family of simple fast
// space-efficient statistically good algorithms for random number
// generation", HMC-CS-2014-0905 (the generator and its DXSM output);
// G. Marsaglia and W. W. Tsang (2000), "The ziggurat method for
// generating random variables", Journal of Statistical Software 5(8)
// (the normal and exponential draws).
package stream
