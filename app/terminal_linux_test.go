package main

import (
	"math"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"golang.org/x/sys/unix"

	"spotloom/capture/live"
)

// openPty opens a pseudo-terminal pair the way the Linux kernel documents
// it (pty(7), ioctl_tty(2)): /dev/ptmx, unlock with TIOCSPTLCK, the
// terminal's number from TIOCGPTN, then /dev/pts/N.
func openPty(t *testing.T, cols int) (master, tty *os.File) {
	t.Helper()
	master, err := os.OpenFile("/dev/ptmx", os.O_RDWR|unix.O_NOCTTY, 0)
	if err != nil {
		t.Skipf("no pseudo-terminals here: %v", err)
	}
	t.Cleanup(func() { master.Close() })
	fd := int(master.Fd())
	if err := unix.IoctlSetPointerInt(fd, unix.TIOCSPTLCK, 0); err != nil {
		t.Fatal(err)
	}
	n, err := unix.IoctlGetInt(fd, unix.TIOCGPTN)
	if err != nil {
		t.Fatal(err)
	}
	if err := unix.IoctlSetWinsize(fd, unix.TIOCSWINSZ, &unix.Winsize{Row: 24, Col: uint16(cols)}); err != nil {
		t.Fatal(err)
	}
	tty, err = os.OpenFile("/dev/pts/"+strconv.Itoa(n), os.O_RDWR|unix.O_NOCTTY, 0)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { tty.Close() })
	return master, tty
}

// readPty reads what the program wrote to the terminal until want appears
// or a second passes.
func readPty(t *testing.T, master *os.File, want string) string {
	t.Helper()
	got := make(chan string, 1)
	go func() {
		var all []byte
		buf := make([]byte, 4096)
		for !strings.Contains(string(all), want) {
			n, err := master.Read(buf)
			all = append(all, buf[:n]...)
			if err != nil {
				break
			}
		}
		got <- string(all)
	}()
	select {
	case s := <-got:
		return s
	case <-time.After(time.Second):
		t.Fatalf("the terminal never showed %q", want)
		return ""
	}
}

// /dev/null is a character device but no terminal: progress and meters
// sent there stay off. A pseudo-terminal is one, and its width is the one
// the terminal was given.
func TestTerminalIsAskedNotGuessed(t *testing.T) {
	null, err := os.OpenFile(os.DevNull, os.O_WRONLY, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer null.Close()
	if st, err := null.Stat(); err != nil || st.Mode()&os.ModeCharDevice == 0 {
		t.Fatalf("%s is not a character device here (%v), so this test proves nothing", os.DevNull, err)
	}
	if isTerminal(null) {
		t.Errorf("%s counts as a terminal", os.DevNull)
	}
	if newProgress(null).enabled {
		t.Errorf("progress is shown on %s", os.DevNull)
	}
	_, tty := openPty(t, 57)
	if !isTerminal(tty) {
		t.Errorf("a pseudo-terminal does not count as a terminal")
	}
	if w := terminalWidth(tty); w != 57 {
		t.Errorf("terminal width %d, want the 57 columns set with TIOCSWINSZ", w)
	}
}

var meterDB = regexp.MustCompile(` (\d)(?::| [▮▯]+ +)(-?\d+)\b`)

// The record meter on a narrow terminal: each update fits in one line
// less than the width (it never wraps), clears what a longer one left, and
// still gives every channel's peak, which is within 0.5 dB of
// 20·log10(max|s|), the definition of dBFS (AES17-2015, §3.12.1).
func TestMeterFitsTheTerminal(t *testing.T) {
	peaks := []float32{0.3, 0.05, 0.71, 0.0123}
	s := live.Status{Frames: 125 * 48000, RateHz: 48000, Peak: peaks, Overruns: 1}
	for _, cols := range []int{200, 60, 40} {
		t.Run(strconv.Itoa(cols), func(t *testing.T) {
			master, tty := openPty(t, cols)
			m := &levelMeter{w: tty, enabled: isTerminal(tty)}
			m.show(s)
			m.done()
			out := readPty(t, master, "\n")
			upd, ok := strings.CutPrefix(out, "\r")
			if !ok {
				t.Fatalf("the update %q does not start at the line's start", out)
			}
			upd, ok = strings.CutSuffix(strings.TrimRight(upd, "\r\n"), "\x1b[K")
			if !ok {
				t.Fatalf("the update %q does not clear to the line's end", out)
			}
			if n := utf8.RuneCountInString(upd); n > cols-1 {
				t.Errorf("the update is %d columns on a %d-column terminal: %q", n, cols, upd)
			}
			if !strings.HasPrefix(upd, "02:05.0") {
				t.Errorf("the update %q does not start with the time 02:05.0 (125 s)", upd)
			}
			found := meterDB.FindAllStringSubmatch(upd, -1)
			if cols >= 40 && len(found) != len(peaks) {
				t.Fatalf("the update %q shows %d channels' peaks, want %d", upd, len(found), len(peaks))
			}
			for _, f := range found {
				c, _ := strconv.Atoi(f[1])
				db, _ := strconv.ParseFloat(f[2], 64)
				want := 20 * math.Log10(float64(peaks[c-1]))
				if math.Abs(db-want) > 0.5 {
					t.Errorf("channel %d shows %g dB, want %.2f (±0.5)", c, db, want)
				}
			}
		})
	}
}

// The progress line too fits a narrow terminal and is cleared at the end.
func TestProgressFitsTheTerminal(t *testing.T) {
	master, tty := openPty(t, 20)
	p := newProgress(tty)
	if !p.enabled {
		t.Fatal("no progress on a terminal")
	}
	p.Report("gridding the lines", 0.5)
	p.Done()
	cleared := "\r\x1b[K"
	out := readPty(t, master, "\x1b[K\r\x1b[K")
	first, _, _ := strings.Cut(strings.TrimPrefix(out, "\r"), "\x1b[K")
	if n := utf8.RuneCountInString(first); n > 19 || !strings.HasPrefix(first, "gridding") {
		t.Errorf("progress %q: %d columns on a 20-column terminal", first, n)
	}
	if !strings.HasSuffix(out, cleared) {
		t.Errorf("progress %q is not cleared at the end", out)
	}
}
