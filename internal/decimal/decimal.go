// Package decimal is allot's one grammar for a measurement written as text,
// shared by the workbook and CSV readers (design/workbook) and by whatever
// else must agree with them on what a number is. It imports nothing of
// allot.
//
// A measurement is
//
//	[+|-] (digits [. digits] | . digits) [(e|E) [+|-] digits]
//
// with ASCII digits only: "12", "-0.5", ".25", "1.5e-3", "+3". Refused, each
// with its own reason: empty text, NaN and infinities (in any spelling
// strconv.ParseFloat accepts: "NaN", "Inf", "+Infinity"), hexadecimal
// floats ("0x1p3"), digit-group underscores ("1_000"), TRUE and FALSE,
// thousands separators and decimal commas ("1,5"), and numbers whose
// magnitude overflows a float64 ("1e400"). The grammar is narrower than
// strconv.ParseFloat's on purpose: a spreadsheet never writes those forms
// for a measurement, so a cell holding one was typed or converted by
// mistake.
package decimal

import (
	"errors"
	"math"
	"regexp"
	"strconv"
	"strings"
)

// ErrEmpty and the other errors say why a text is not a measurement.
var (
	ErrEmpty       = errors.New("is empty")
	ErrNaN         = errors.New("is NaN (not a number), not a measurement")
	ErrInf         = errors.New("is an infinity, not a measurement")
	ErrHex         = errors.New("is a hexadecimal number; type the measurement in decimal")
	ErrUnderscore  = errors.New("has an underscore; type the digits without separators")
	ErrBool        = errors.New("is TRUE or FALSE, not a number")
	ErrComma       = errors.New("has a decimal comma")
	ErrRange       = errors.New("is too large in magnitude for a measurement")
	ErrNotDecimal  = errors.New("is not a number")
	grammar        = regexp.MustCompile(`^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$`)
	commaGrammar   = regexp.MustCompile(`^[+-]?[0-9]+,[0-9]+$`)
	infOrNaNPrefix = []string{"nan", "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity", "+nan", "-nan"}
)

// Check returns nil when s (already trimmed of spaces) is a measurement in
// the grammar above, and otherwise one of the package's errors.
func Check(s string) error {
	_, err := Parse(s)
	return err
}

// Parse returns the value of s, or why s is not a measurement.
func Parse(s string) (float64, error) {
	if s == "" {
		return 0, ErrEmpty
	}
	if grammar.MatchString(s) {
		x, err := strconv.ParseFloat(s, 64)
		if err != nil || math.IsInf(x, 0) {
			return 0, ErrRange
		}
		return x, nil
	}
	return 0, reason(s)
}

// reason classifies a text the grammar refused.
func reason(s string) error {
	low := strings.ToLower(s)
	for _, p := range infOrNaNPrefix {
		if low == p {
			if strings.Contains(low, "nan") {
				return ErrNaN
			}
			return ErrInf
		}
	}
	switch {
	case low == "true" || low == "false":
		return ErrBool
	case strings.HasPrefix(strings.TrimLeft(low, "+-"), "0x"):
		return ErrHex
	case strings.Contains(s, "_"):
		return ErrUnderscore
	case commaGrammar.MatchString(s):
		return ErrComma
	}
	return ErrNotDecimal
}

// FromComma returns s with its decimal comma replaced by a point when s is
// a number written with a decimal comma ("12,5" → "12.5"; no thousands
// separators), and reports whether it was.
func FromComma(s string) (string, bool) {
	if !commaGrammar.MatchString(s) {
		return s, false
	}
	return strings.Replace(s, ",", ".", 1), true
}
