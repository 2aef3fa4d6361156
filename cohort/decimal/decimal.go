// Package decimal reads plain decimal numbers from bytes quickly and exactly, for the readers of
// tables and of raw recordings.
package decimal

// pow10 holds the powers of ten that are exact in float64.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// Plain reads b as a plain decimal (spaces around it, an optional sign, digits with at most one
// decimal point, or a comma with comma set), when its digits form an integer below 2⁵³ with at
// most 22 decimals: then m / 10ᶠ of two exact floats is correctly rounded (Clinger 1990, How to
// read floating point numbers accurately, PLDI), the same as strconv.ParseFloat. Anything else
// (an exponent, more digits, not a number) gives ok false, for a general parser to take.
func Plain(b []byte, comma bool) (v float64, ok bool) {
	i, neg := 0, false
	for i < len(b) && b[i] == ' ' {
		i++
	}
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	var m uint64
	digits, frac := 0, -1
	j := i
	for ; j < len(b); j++ {
		ch := b[j]
		if ch >= '0' && ch <= '9' {
			m = m*10 + uint64(ch-'0')
			digits++
			if frac >= 0 {
				frac++
			}
			continue
		}
		if (ch == '.' || (ch == ',' && comma)) && frac < 0 {
			frac = 0
			continue
		}
		break
	}
	k := j
	for k < len(b) && b[k] == ' ' {
		k++
	}
	if digits == 0 || digits > 15 || k != len(b) || frac == 0 || frac >= len(pow10) {
		return 0, false
	}
	v = float64(m)
	if frac > 0 {
		v /= pow10[frac]
	}
	if neg {
		v = -v
	}
	return v, true
}
