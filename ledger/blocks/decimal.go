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
