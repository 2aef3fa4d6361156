package par

// SubSeed derives the seed of one random step of a run from the run's seed, a name for the step
// and an index (FNV-1a over the name, then the SplitMix64 finalizer of Steele, Lea & Flood 2014),
// so that no two steps, and no two indices of one step, share a stream.
func SubSeed(seed uint64, step string, i int) uint64 {
	z := seed
	for _, b := range []byte(step) {
		z = (z ^ uint64(b)) * 0x100000001b3
	}
	z ^= uint64(i+1) * 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}
