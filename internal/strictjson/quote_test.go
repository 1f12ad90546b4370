package strictjson

import (
	"strconv"
	"strings"
	"testing"
)

func TestQuote(t *testing.T) {
	// Short values are quoted exactly as the standard library quotes them.
	for _, s := range []string{"", "spiral", "tab\there", strings.Repeat("é", QuoteLimit)} {
		if got, want := Quote(s), strconv.Quote(s); got != want {
			t.Errorf("Quote(%q) = %s, strconv.Quote gives %s", s, got, want)
		}
	}
	// A long value keeps its first QuoteLimit characters (whole runes) and
	// says how long it was.
	long := strings.Repeat("ü", 1_000_000)
	got := Quote(long)
	if want := strconv.Quote(strings.Repeat("ü", QuoteLimit)) + "… (1,000,000 characters)"; got != want {
		t.Errorf("Quote(long) = %s, want %s", got, want)
	}
}

func TestCount(t *testing.T) {
	for n, want := range map[int]string{0: "0", 999: "999", 1000: "1,000", 2998: "2,998", 1234567: "1,234,567", -45678: "-45,678"} {
		if got := Count(n); got != want {
			t.Errorf("Count(%d) = %q, want %q", n, got, want)
		}
	}
}
