package blocks

import (
	"strconv"
)

// ParseDecimal parses a plain decimal number (optional sign, digits,
// optional point and digits; at most 18 digits in all) into mant and
// scale. ok is false for anything else (exponents, NaN, Inf, empty, too
// many digits), which the caller then hands to strconv.ParseFloat.
func ParseDecimal(s []byte) (mant int64, scale uint8, ok bool) {
	// Fast path: at most 18 characters cannot hold more than 18 digits, so
	// the mantissa cannot overflow and no significant-digit count is needed.
	if n := len(s); n > 0 && n <= 18 {
		i := 0
		neg := s[0] == '-'
		if neg || s[0] == '+' {
			i = 1
		}
		var m int64
		point := -1
		digits := 0
		for ; i < n; i++ {
			c := s[i] - '0'
			if c <= 9 {
				m = m*10 + int64(c)
				digits++
				continue
			}
			if s[i] == '.' && point < 0 {
				point = i
				continue
			}
			return 0, 0, false
		}
		if digits == 0 {
			return 0, 0, false
		}
		if point >= 0 {
			scale = uint8(n - point - 1)
		}
		if neg {
			m = -m
		}
		return m, scale, true
	}
	return parseDecimalLong(s)
}

// parseDecimalLong is ParseDecimal for longer text, counting significant
// digits.
func parseDecimalLong(s []byte) (mant int64, scale uint8, ok bool) {
	i := 0
	neg := false
	if len(s) > 0 && (s[0] == '-' || s[0] == '+') {
		neg = s[0] == '-'
		i = 1
	}
	seen := 0 // digit characters seen
	sig := 0  // significant digits in mant
	point := false
	var m int64
	for ; i < len(s); i++ {
		ch := s[i]
		switch {
		case ch >= '0' && ch <= '9':
			seen++
			if m != 0 || ch != '0' {
				sig++
				if sig > 18 {
					return 0, 0, false
				}
			}
			m = m*10 + int64(ch-'0')
			if point {
				if scale == MaxScale {
					return 0, 0, false
				}
				scale++
			}
		case ch == '.' && !point:
			point = true
		default:
			return 0, 0, false
		}
	}
	if seen == 0 {
		return 0, 0, false
	}
	if neg {
		m = -m
	}
	return m, scale, true
}

func parseDecimal(mant int64, scale uint8) float64 {
	s := strconv.FormatInt(mant, 10)
	neg := false
	if s[0] == '-' {
		neg, s = true, s[1:]
	}
	for len(s) <= int(scale) {
		s = "0" + s
	}
	s = s[:len(s)-int(scale)] + "." + s[len(s)-int(scale):]
	if neg {
		s = "-" + s
	}
	v, _ := strconv.ParseFloat(s, 64)
	return v
}

// PlainNumber reports whether s is a number written the way data loggers
// write them: an optional sign, decimal digits with at most one decimal
// point (at least one digit in all, so "5", "5.", ".5" and "-0.25" are
// numbers and ".", "+." and "-" are not), then an optional exponent: e or
// E, an optional sign and at least one digit. Nothing else is a number:
// no spaces, no digit separators ("1_000"), no hexadecimal ("0x1p3"), no
// "Inf", "Infinity" or "NaN", no comma for the point — all of which
// strconv.ParseFloat would read in some form. Callers gate ParseFloat with
// it.
func PlainNumber(s []byte) bool {
	i, n := 0, len(s)
	if i < n && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for i < n && s[i] >= '0' && s[i] <= '9' {
		i++
		digits++
	}
	if i < n && s[i] == '.' {
		i++
		for i < n && s[i] >= '0' && s[i] <= '9' {
			i++
			digits++
		}
	}
	if digits == 0 {
		return false
	}
	if i < n && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < n && (s[i] == '+' || s[i] == '-') {
			i++
		}
		exp := 0
		for i < n && s[i] >= '0' && s[i] <= '9' {
			i++
			exp++
		}
		if exp == 0 {
			return false
		}
	}
	return i == n
}

// WholeNumber parses a count: decimal digits only (no sign, point,
// exponent or spaces), at most 18 of them. ok is false for anything else.
func WholeNumber(s []byte) (v int64, ok bool) {
	if len(s) == 0 || len(s) > 18 {
		return 0, false
	}
	for _, c := range s {
		if c < '0' || c > '9' {
			return 0, false
		}
		v = v*10 + int64(c-'0')
	}
	return v, true
}
