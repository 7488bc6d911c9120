package dedupe

import (
	"math"
	"math/bits"
	"slices"
)

// Constants of the 64-bit mixing below: the xxHash64 primes and the
// finaliser of MurmurHash3 (fmix64). Fixed, so that signatures and band keys
// are the same in every run and on every machine.
const (
	prime1 = 0x9E3779B185EBCA87
	prime2 = 0xC2B2AE3D27D4EB4F

	seedShingle = 0x2545F4914F6CDD1D
	seedExact   = 0x1B873593CC9E2D51
	seedProbe   = 0x85EBCA6BC2B2AE35
	seedBand    = 0x27D4EB2F165667C5
)

// fmix64 is MurmurHash3's 64-bit finaliser: every input bit affects every
// output bit.
func fmix64(h uint64) uint64 {
	h ^= h >> 33
	h *= 0xff51afd7ed558ccd
	h ^= h >> 33
	h *= 0xc4ceb9fe1a85ec53
	h ^= h >> 33
	return h
}

// round folds v into acc, as an xxHash64 round does.
func round(acc, v uint64) uint64 {
	acc += v * prime2
	acc = bits.RotateLeft64(acc, 31)
	return acc * prime1
}

// hashWords appends the xxHash64 of each normalised word of s to dst.
func hashWords(sc *scanner, s string, dst []uint64) []uint64 {
	sc.reset(s)
	for sc.next() {
		dst = append(dst, sc.hash())
	}
	return dst
}

// seqHash hashes a word sequence in order: equal for equal normalised texts.
func seqHash(words []uint64) uint64 {
	h := uint64(seedExact)
	for _, w := range words {
		h = round(h, w)
	}
	return fmix64(h ^ uint64(len(words)))
}

// shingles appends the hashes of the k-word shingles of words to dst, one
// per position (duplicates included). A text of fewer than k words is one
// shingle of all its words; a text without words has none.
func shingles(words []uint64, k int, dst []uint64) []uint64 {
	n := len(words)
	if n == 0 {
		return dst
	}
	if n < k {
		k = n
	}
	for i := 0; i+k <= n; i++ {
		h := uint64(seedShingle)
		for _, w := range words[i : i+k] {
			h = round(h, w)
		}
		dst = append(dst, fmix64(h^uint64(k)))
	}
	return dst
}

// sortedSet sorts sh and drops repeats in place, returning the set.
func sortedSet(sh []uint64) []uint64 {
	slices.Sort(sh)
	return slices.Compact(sh)
}

// jaccard is |a ∩ b| / |a ∪ b| for two sorted sets without repeats.
func jaccard(a, b []uint64) float64 {
	if len(a) == 0 && len(b) == 0 {
		return 1
	}
	inter, i, j := 0, 0, 0
	for i < len(a) && j < len(b) {
		switch {
		case a[i] < b[j]:
			i++
		case a[i] > b[j]:
			j++
		default:
			inter++
			i++
			j++
		}
	}
	return float64(inter) / float64(len(a)+len(b)-inter)
}

// emptyBin marks a bin that no shingle fell into. A shingle whose hash is
// exactly this value (probability 2^-64) reads as absent from its bin.
const emptyBin = math.MaxUint64

// binOf maps a uniform 64-bit hash to one of k bins by its high bits, so
// that the order of hashes within a bin is the order of their low bits.
func binOf(h uint64, k int) int {
	hi, _ := bits.Mul64(h, uint64(k))
	return int(hi)
}

// probeCache is the number of probe steps per bin that a densifier keeps
// in its table; later steps are computed.
const probeCache = 64

// densifier holds the first probeCache steps of every bin's probe
// sequence for signatures of k values, so that densifying a short text's
// signature costs a table walk rather than a hash per step. It is read-only
// once made and safe to share between goroutines.
type densifier struct {
	k      int
	probes []uint16 // probes[i*probeCache+t]: step t of bin i
}

func newDensifier(k int) *densifier {
	d := &densifier{k: k, probes: make([]uint16, k*probeCache)}
	for i := range k {
		for t := range probeCache {
			d.probes[i*probeCache+t] = uint16(probeStep(i, uint64(t), k))
		}
	}
	return d
}

// probeStep is step t of empty bin i's probe sequence: a pseudo-random bin,
// the same for every set.
func probeStep(i int, t uint64, k int) int {
	return binOf(fmix64(seedProbe^uint64(i)<<32^t), k)
}

// oph computes a one-permutation MinHash signature of the shingle hashes sh
// (Li, Owen and Zhang, "One Permutation Hashing", NIPS 2012) into sig, of
// d.k values: the hashes are split into d.k bins by their high bits and each
// bin keeps its smallest hash. Empty bins are filled by optimal
// densification (Shrivastava, "Optimal Densification for Fast and Accurate
// Minwise Hashing", ICML 2017): empty bin i takes the value of the first
// non-empty bin in a fixed pseudo-random probe sequence of i, the same
// sequence for every set, so two sets agree in bin i with probability equal
// to their Jaccard similarity. Because a hash determines its bin, values
// borrowed from different bins never compare equal by accident. filled is
// scratch of d.k. oph returns the number of bins that held a shingle; it
// leaves sig all empty when sh is.
func (d *densifier) oph(sh []uint64, sig []uint64, filled []bool) int {
	k := d.k
	sig, filled = sig[:k], filled[:k]
	for i := range sig {
		sig[i] = emptyBin
	}
	for _, h := range sh {
		b := binOf(h, k)
		if h < sig[b] {
			sig[b] = h
		}
	}
	nonEmpty := 0
	for i, v := range sig {
		filled[i] = v != emptyBin
		if filled[i] {
			nonEmpty++
		}
	}
	if nonEmpty == 0 || nonEmpty == k {
		return nonEmpty
	}
	for i := range sig {
		if !filled[i] {
			sig[i] = d.probe(i, sig, filled)
		}
	}
	return nonEmpty
}

// probe returns the value empty bin i borrows: that of the first filled bin
// in i's probe sequence. The sequence is pseudo-random and hits a filled bin
// within a few times k/filled steps; a linear scan after 64k steps only
// guarantees the end.
func (d *densifier) probe(i int, sig []uint64, filled []bool) uint64 {
	k := d.k
	for _, j := range d.probes[i*probeCache : (i+1)*probeCache] {
		if filled[j] {
			return sig[j]
		}
	}
	for t := uint64(probeCache); t < 64*uint64(k); t++ {
		if j := probeStep(i, t, k); filled[j] {
			return sig[j]
		}
	}
	for j := (i + 1) % k; ; j = (j + 1) % k {
		if filled[j] {
			return sig[j]
		}
	}
}

// bandKeys hashes each band of r consecutive signature values into one key,
// keys[band] for band 0..len(keys)-1.
func bandKeys(sig []uint64, r int, keys []uint64) {
	for band := range keys {
		h := uint64(seedBand) ^ uint64(band)
		for _, v := range sig[band*r : band*r+r] {
			h = round(h, v)
		}
		keys[band] = fmix64(h)
	}
}

// Similarity returns the exact Jaccard similarity of the sets of
// shingle-word shingles of a and b, normalised as Find normalises them
// (shingle 0 means 5): the value Find reports for a pair. Two texts without
// words have similarity 1.
func Similarity(a, b string, shingle int) float64 {
	if shingle <= 0 {
		shingle = DefaultOptions().Shingle
	}
	var sc scanner
	var buf []uint64
	buf = hashWords(&sc, a, buf)
	sa := sortedSet(shingles(buf, shingle, nil))
	buf = hashWords(&sc, b, buf[:0])
	sb := sortedSet(shingles(buf, shingle, nil))
	return jaccard(sa, sb)
}
