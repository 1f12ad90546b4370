package strictjson

import (
	"strconv"
	"unicode/utf8"
)

// QuoteLimit is the most characters of a value an error message quotes.
const QuoteLimit = 60

// Quote quotes s for an error message like strconv.Quote, but keeps at
// most QuoteLimit characters of it: a longer value is cut and the quote
// says how long it was, so a message stays one short line whatever the
// input holds.
func Quote(s string) string {
	n := utf8.RuneCountInString(s)
	if n <= QuoteLimit {
		return strconv.Quote(s)
	}
	cut := 0
	for i := 0; i < QuoteLimit; i++ {
		_, size := utf8.DecodeRuneInString(s[cut:])
		cut += size
	}
	return strconv.Quote(s[:cut]) + "… (" + Count(n) + " characters)"
}

// Count writes a whole number with thousands separated by commas, as
// messages print counts: 2998 → "2,998".
func Count(n int) string {
	s := strconv.Itoa(n)
	neg := n < 0
	if neg {
		s = s[1:]
	}
	out := make([]byte, 0, len(s)+len(s)/3+1)
	if neg {
		out = append(out, '-')
	}
	for i := range len(s) {
		if i > 0 && (len(s)-i)%3 == 0 {
			out = append(out, ',')
		}
		out = append(out, s[i])
	}
	return string(out)
}
