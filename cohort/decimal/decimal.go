// Package decimal reads plain decimal numbers from bytes quickly and exactly, for the readers of
// tables and of raw recordings.
package decimal

// pow10 holds the powers of ten that are exact in float64.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// Plain reads b as a plain decimal (spaces around it, an optional sign, digits with at most one
// decimal point, or a comma with comma set) of at most 15 digits, exactly (Scan). Anything else
// (an exponent, more digits, not a number) gives ok false, for a general parser to take.
func Plain(b []byte, comma bool) (v float64, ok bool) {
	i, k := 0, len(b)
	for i < k && b[i] == ' ' {
		i++
	}
	for k > i && b[k-1] == ' ' {
		k--
	}
	point := byte('.')
	if comma {
		point = ','
	}
	v, end, ok := Scan(b[:k], i, 0, point)
	return v, ok && end == k
}

// Scan reads a plain decimal that starts at b[pos] and ends at the byte delim or at the end of b:
// an optional sign, digits, and a decimal point ('.' or point) followed by digits, with at most 15
// digits in all. It returns the value and the position of its end. For such numbers m / 10ᶠ of
// two exact floats is correctly rounded (Clinger 1990, How to read floating point numbers
// accurately, PLDI), the same as strconv.ParseFloat. Anything else gives ok false. (Reading eight
// digits at a time as one word was tried and was slower on cells of this length: its chain of
// dependent steps is longer than the few loop turns it saves.)
func Scan(b []byte, pos int, delim, point byte) (v float64, end int, ok bool) {
	i, neg := pos, false
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	start := i
	i, m := digitsFrom(b, i, 0)
	digits := i - start
	frac := 0
	if i < len(b) && (b[i] == '.' || b[i] == point) {
		fs := i + 1
		i, m = digitsFrom(b, fs, m)
		if frac = i - fs; frac == 0 {
			return 0, 0, false
		}
		digits += frac
	}
	if digits == 0 || digits > 15 || (i < len(b) && b[i] != delim) {
		return 0, 0, false
	}
	v = float64(m)
	if frac > 0 {
		v /= pow10[frac]
	}
	if neg {
		v = -v
	}
	return v, i, true
}

// digitsFrom reads decimal digits from b[i], appending them to m; it returns where they end.
func digitsFrom(b []byte, i int, m uint64) (int, uint64) {
	for ; i < len(b); i++ {
		d := b[i] - '0'
		if d > 9 {
			break
		}
		m = m*10 + uint64(d)
	}
	return i, m
}
