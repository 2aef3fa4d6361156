package cluster

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// KMeansOptions sets up KMeans. Zero values take the documented defaults.
type KMeansOptions struct {
	K        int                   // 1 ≤ K ≤ rows (required)
	Restarts int                   // independent k-means++ starts; 0 means 10
	MaxIter  int                   // Lloyd iterations per start; 0 means 300
	Tol      float64               // stop when the summed squared centroid shift ≤ Tol × mean column variance; 0 means 1e-4
	Seed     uint64                // fixes the result exactly, whatever Workers is
	Workers  int                   // restarts run in parallel; 0 means GOMAXPROCS; never changes the result
	Progress func(done, total int) // optional; called after each restart, from one goroutine at a time
}

// KMeansResult is the best of all restarts: the one with the lowest within-cluster sum of squares.
type KMeansResult struct {
	Centroids *mat.Dense // K × columns
	Labels    []int      // nearest centroid of each row, ties to the lower index
	Sizes     []int      // rows per cluster
	Inertia   float64    // within-cluster sum of squared distances
	Iter      int        // Lloyd iterations of the winning restart
	Restart   int        // index of the winning restart
}

// KMeans groups the rows of x by Lloyd's algorithm from greedy k-means++ seeds, with Hamerly's exact
// bounds so that every iteration assigns exactly as plain Lloyd's would, only faster. An emptied
// cluster is moved to the row farthest from its centroid. Restarts run in parallel, each on its own
// random stream rand.NewPCG(Seed, restart), and the lowest inertia wins (ties to the lower restart).
//
// References: Arthur & Vassilvitskii (2007), k-means++: the advantages of careful seeding, Proc. SODA
// (greedy variant with 2 + ⌊ln K⌋ trials per centre, as in their paper's discussion);
// Hamerly (2010), Making k-means even faster, Proc. SIAM SDM.
func KMeans(ctx context.Context, x mat.Matrix, opts KMeansOptions) (*KMeansResult, error) {
	data, n, d, err := checkMatrix("KMeans", x)
	if err != nil {
		return nil, err
	}
	if err := checkK("KMeans", opts.K, n); err != nil {
		return nil, err
	}
	if opts.Restarts < 0 || opts.MaxIter < 0 || opts.Tol < 0 || math.IsNaN(opts.Tol) {
		return nil, fmt.Errorf("cluster: KMeans: Restarts %d, MaxIter %d, Tol %v: %w; use values ≥ 0 (0 takes the default)", opts.Restarts, opts.MaxIter, opts.Tol, ErrDomain)
	}
	restarts := opts.Restarts
	if restarts == 0 {
		restarts = 10
	}
	maxIter := opts.MaxIter
	if maxIter == 0 {
		maxIter = 300
	}
	tol := opts.Tol
	if tol == 0 {
		tol = 1e-4
	}
	tol *= meanColumnVariance(data, n, d)

	results := make([]*kmRun, restarts)
	errs := make([]error, restarts)
	jobs := make(chan int)
	var wg sync.WaitGroup
	var mu sync.Mutex
	done := 0
	for w := 0; w < min(workers(opts.Workers), restarts); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for r := range jobs {
				rng := rand.New(rand.NewPCG(opts.Seed, uint64(r)))
				km := newKMRun(data, n, d, opts.K)
				km.seedPlusPlus(rng)
				errs[r] = km.lloyd(ctx, maxIter, tol)
				results[r] = km
				if opts.Progress != nil {
					mu.Lock()
					done++
					opts.Progress(done, restarts)
					mu.Unlock()
				}
			}
		}()
	}
	for r := 0; r < restarts; r++ {
		if ctx.Err() != nil {
			break
		}
		jobs <- r
	}
	close(jobs)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	best := -1
	for r, km := range results {
		if errs[r] != nil {
			return nil, errs[r]
		}
		if best < 0 || km.inertia < results[best].inertia {
			best = r
		}
	}
	km := results[best]
	return &KMeansResult{
		Centroids: mat.NewDense(opts.K, d, km.centers),
		Labels:    km.labels,
		Sizes:     km.counts,
		Inertia:   km.inertia,
		Iter:      km.iter,
		Restart:   best,
	}, nil
}

func meanColumnVariance(data []float64, n, d int) float64 {
	var total float64
	for j := 0; j < d; j++ {
		var mean float64
		for i := 0; i < n; i++ {
			mean += data[i*d+j]
		}
		mean /= float64(n)
		var ss float64
		for i := 0; i < n; i++ {
			v := data[i*d+j] - mean
			ss += v * v
		}
		total += ss / float64(n)
	}
	return total / float64(d)
}

// kmRun is one restart: its centres, labels and Hamerly bounds.
type kmRun struct {
	x       []float64
	n, d, k int
	centers []float64
	labels  []int
	counts  []int
	upper   []float64 // upper bound on the distance to the assigned centre
	lower   []float64 // lower bound on the distance to the second-closest centre
	inertia float64
	iter    int
}

func newKMRun(x []float64, n, d, k int) *kmRun {
	return &kmRun{x: x, n: n, d: d, k: k,
		centers: make([]float64, k*d), labels: make([]int, n), counts: make([]int, k),
		upper: make([]float64, n), lower: make([]float64, n)}
}

func (km *kmRun) row(i int) []float64    { return km.x[i*km.d : (i+1)*km.d] }
func (km *kmRun) center(j int) []float64 { return km.centers[j*km.d : (j+1)*km.d] }

// seedPlusPlus picks K starting centres by greedy k-means++: each new centre is the best, by the
// resulting potential, of 2 + ⌊ln K⌋ rows drawn with probability proportional to D².
func (km *kmRun) seedPlusPlus(rng *rand.Rand) {
	n, k := km.n, km.k
	first := rng.IntN(n)
	copy(km.center(0), km.row(first))
	closest := make([]float64, n)
	for i := range closest {
		closest[i] = math.Inf(1)
	}
	pot := lowerClosest(closest, km.x, km.d, km.center(0))
	trials := 2 + int(math.Log(float64(k)))
	cands := make([]float64, trials*km.d)
	pots := make([]float64, trials)
	for c := 1; c < k; c++ {
		idx := make([]int, trials)
		for t := range idx {
			idx[t] = sampleD2(rng, closest, pot)
			copy(cands[t*km.d:(t+1)*km.d], km.row(idx[t]))
		}
		// One sweep over the rows scores every trial (the data is read once, not once per trial).
		potentials(pots, closest, km.x, km.d, cands)
		best := 0
		for t := range pots {
			if pots[t] < pots[best] {
				best = t
			}
		}
		copy(km.center(c), km.row(idx[best]))
		pot = lowerClosest(closest, km.x, km.d, km.center(c))
	}
}

// potentials sets pots[t] = Σᵢ min(closest[i], ‖xᵢ − cₜ‖²) for each row-major candidate cₜ.
func potentials(pots, closest, x []float64, d int, cands []float64) {
	for t := range pots {
		pots[t] = 0
	}
	dist := make([]float64, len(pots))
	for i, off := 0, 0; i < len(closest); i, off = i+1, off+d {
		sqDistsTo(dist, x[off:off+d], cands, d)
		ci := closest[i]
		for t, v := range dist {
			pots[t] += min(ci, v)
		}
	}
}

// lowerClosest lowers closest[i] to ‖xᵢ − c‖² where that is smaller and returns the new sum.
func lowerClosest(closest, x []float64, d int, c []float64) float64 {
	var pot float64
	for i, off := 0, 0; i < len(closest); i, off = i+1, off+d {
		v := min(closest[i], sqDist(x[off:off+d], c))
		closest[i] = v
		pot += v
	}
	return pot
}

// sampleD2 draws a row with probability proportional to its weight; when every weight is zero
// (all rows coincide with a centre) it draws uniformly.
func sampleD2(rng *rand.Rand, w []float64, total float64) int {
	if !(total > 0) {
		return rng.IntN(len(w))
	}
	r := rng.Float64() * total
	var acc float64
	for i, v := range w {
		acc += v
		if r < acc {
			return i
		}
	}
	for i := len(w) - 1; i >= 0; i-- {
		if w[i] > 0 {
			return i
		}
	}
	return len(w) - 1
}

// assignAll computes exact nearest and second-nearest distances for every row.
func (km *kmRun) assignAll() {
	for i := 0; i < km.n; i++ {
		km.assignExact(i)
	}
}

func (km *kmRun) assignExact(i int) {
	lab, b1, b2 := nearestTwo(km.row(i), km.centers, km.d)
	km.labels[i] = lab
	km.upper[i] = math.Sqrt(b1)
	km.lower[i] = math.Sqrt(b2)
}

// nearestTwo returns the index of the closest of the row-major centres to x (ties to the lower
// index) and the squared distances to the closest and the second closest.
func nearestTwo(x, centers []float64, d int) (int, float64, float64) {
	var buf [16]float64
	var dist []float64
	if k := len(centers) / d; k <= len(buf) {
		dist = buf[:k]
	} else {
		dist = make([]float64, k)
	}
	sqDistsTo(dist, x, centers, d)
	b1, b2 := math.Inf(1), math.Inf(1)
	lab := 0
	for j, dj := range dist {
		if dj < b1 {
			b2, b1, lab = b1, dj, j
		} else if dj < b2 {
			b2 = dj
		}
	}
	return lab, b1, b2
}

// sqDistsTo sets dst[j] to the squared distance from x to the j-th of the row-major centres. Four
// centres are measured together so that their sums run as independent chains: this is the hot
// loop of every fit, and a single chain of dependent additions would bound it by latency.
func sqDistsTo(dst, x, centers []float64, d int) {
	x = x[:d]
	k := len(dst)
	j := 0
	for ; j+4 <= k; j += 4 {
		c0 := centers[j*d : j*d+d]
		c1 := centers[(j+1)*d : (j+1)*d+d]
		c2 := centers[(j+2)*d : (j+2)*d+d]
		c3 := centers[(j+3)*d : (j+3)*d+d]
		var s0, s1, s2, s3 float64
		for t, v := range x {
			a0 := v - c0[t]
			a1 := v - c1[t]
			a2 := v - c2[t]
			a3 := v - c3[t]
			s0 += a0 * a0
			s1 += a1 * a1
			s2 += a2 * a2
			s3 += a3 * a3
		}
		dst[j], dst[j+1], dst[j+2], dst[j+3] = s0, s1, s2, s3
	}
	for ; j < k; j++ {
		dst[j] = sqDist(x, centers[j*d:(j+1)*d])
	}
}

// lloyd iterates assignment and update with Hamerly (2010) bounds until labels are stable, the
// centres stop moving (tol), or maxIter is reached; then it computes the inertia exactly.
func (km *kmRun) lloyd(ctx context.Context, maxIter int, tol float64) error {
	n, d, k := km.n, km.d, km.k
	half := make([]float64, k) // s(j): half the distance from centre j to its nearest other centre
	move := make([]float64, k)
	old := make([]float64, k*d)
	converged := false
	km.assignAll()
	for it := 1; it <= maxIter; it++ {
		if it%4 == 0 && ctx.Err() != nil {
			return ctx.Err()
		}
		km.iter = it
		copy(old, km.centers)
		km.update()
		shift := 0.0
		maxMove, maxMove2, maxIdx := 0.0, 0.0, -1
		for j := 0; j < k; j++ {
			s := sqDist(old[j*d:(j+1)*d], km.center(j))
			shift += s
			move[j] = math.Sqrt(s)
			if move[j] > maxMove {
				maxMove2, maxMove, maxIdx = maxMove, move[j], j
			} else if move[j] > maxMove2 {
				maxMove2 = move[j]
			}
		}
		// Bound update after the centres moved (Hamerly 2010, Algorithm 2, UPDATE-BOUNDS).
		for i := 0; i < n; i++ {
			a := km.labels[i]
			km.upper[i] += move[a]
			if a == maxIdx {
				km.lower[i] -= maxMove2
			} else {
				km.lower[i] -= maxMove
			}
		}
		if shift <= tol {
			break
		}
		if km.reassign(half) == 0 {
			converged = true // labels are exact for these centres, which are their means
			break
		}
	}
	if !converged {
		// Final E-step against the final centres, so that labels and inertia agree exactly.
		km.reassign(half)
	}
	km.inertia = 0
	for i := range km.counts {
		km.counts[i] = 0
	}
	for i := 0; i < n; i++ {
		km.counts[km.labels[i]]++
		// Squared distances computed afresh rather than squared roots, for reference precision.
		km.inertia += sqDist(km.row(i), km.center(km.labels[i]))
	}
	return nil
}

// reassign gives each row its nearest centre, skipping rows whose Hamerly bounds prove their
// label unchanged (Hamerly 2010, Algorithm 2, lines 4–12); it returns how many labels changed.
func (km *kmRun) reassign(half []float64) int {
	km.halfDistances(half)
	changed := 0
	for i := 0; i < km.n; i++ {
		a := km.labels[i]
		m := max(half[a], km.lower[i])
		if km.upper[i] <= m {
			continue
		}
		km.upper[i] = math.Sqrt(sqDist(km.row(i), km.center(a))) // tighten the upper bound
		if km.upper[i] <= m {
			continue
		}
		km.assignExact(i)
		if km.labels[i] != a {
			changed++
		}
	}
	return changed
}

// update moves each centre to the mean of its rows; an empty cluster takes the row farthest from
// its own centre, and every bound is kept valid by the movement that follows.
func (km *kmRun) update() {
	n, d, k := km.n, km.d, km.k
	for j := range km.counts {
		km.counts[j] = 0
	}
	sums := make([]float64, k*d)
	for i := 0; i < n; i++ {
		a := km.labels[i]
		km.counts[a]++
		s := sums[a*d : (a+1)*d]
		for j, v := range km.row(i) {
			s[j] += v
		}
	}
	for j := 0; j < k; j++ {
		if km.counts[j] == 0 {
			continue
		}
		c := km.center(j)
		inv := 1 / float64(km.counts[j])
		for t := range c {
			c[t] = sums[j*d+t] * inv
		}
	}
	for j := 0; j < k; j++ {
		if km.counts[j] != 0 {
			continue
		}
		far, farD := -1, -1.0
		for i := 0; i < n; i++ {
			if km.counts[km.labels[i]] <= 1 {
				continue
			}
			if dd := sqDist(km.row(i), km.center(km.labels[i])); dd > farD {
				far, farD = i, dd
			}
		}
		if far < 0 {
			continue
		}
		km.counts[km.labels[far]]--
		copy(km.center(j), km.row(far))
		km.counts[j] = 1
		// The moved row is now exactly at its new centre; its bounds become exact there.
		km.labels[far] = j
		km.upper[far] = 0
		km.lower[far] = 0
	}
}

func (km *kmRun) halfDistances(half []float64) {
	k := km.k
	for j := 0; j < k; j++ {
		half[j] = math.Inf(1)
	}
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			dd := math.Sqrt(sqDist(km.center(a), km.center(b))) / 2
			half[a] = min(half[a], dd)
			half[b] = min(half[b], dd)
		}
	}
	if k == 1 {
		half[0] = math.Inf(1)
	}
}

// Assign gives each row of x its nearest centroid (ties to the lower index) and the Euclidean
// distance to it. It is how new data is placed with a frozen fit.
func Assign(centroids, x mat.Matrix) (labels []int, dist []float64, err error) {
	c, k, dc, err := checkMatrix("Assign", centroids)
	if err != nil {
		return nil, nil, err
	}
	data, n, d, err := checkMatrix("Assign", x)
	if err != nil {
		return nil, nil, err
	}
	if d != dc {
		return nil, nil, fmt.Errorf("cluster: Assign: rows have %d columns, centroids %d: %w; project new rows with the same fit first", d, dc, ErrShape)
	}
	labels = make([]int, n)
	dist = make([]float64, n)
	for i := 0; i < n; i++ {
		labels[i], dist[i] = Nearest(c, k, data[i*d:(i+1)*d])
	}
	return labels, dist, nil
}

// Nearest returns the index of the row of the k×len(x) row-major centroids closest to x (ties to
// the lower index) and the Euclidean distance to it. It does not check its arguments.
func Nearest(centroids []float64, k int, x []float64) (int, float64) {
	j, d2, _ := nearestTwo(x, centroids[:k*len(x)], len(x))
	return j, math.Sqrt(d2)
}
