package decimal

import (
	"math/rand/v2"
	"strconv"
	"testing"
)

// Plain agrees bit for bit with strconv.ParseFloat on every plain decimal it takes (the
// standard library as the reference), and takes none of the other forms.
func TestPlainAgreesWithStrconv(t *testing.T) {
	t.Parallel()
	rng := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 200000; i++ {
		s := strconv.FormatFloat((rng.Float64()-0.5)*pow10[rng.IntN(12)], 'f', rng.IntN(10), 64)
		v, ok := Plain([]byte(s), false)
		w, err := strconv.ParseFloat(s, 64)
		if ok && (err != nil || v != w) {
			t.Fatalf("%s: %v, strconv %v", s, v, w)
		}
	}
	for _, s := range []string{"", "-", ".", "1.", "1e5", "0x10", "1_000", "12345678901234567", "1,5", "NaN", "1.2.3"} {
		if _, ok := Plain([]byte(s), false); ok {
			t.Errorf("%q was taken", s)
		}
	}
	if v, ok := Plain([]byte(" -1,25 "), true); !ok || v != -1.25 {
		t.Errorf("a decimal comma: %v %v", v, ok)
	}
}
