package main

import (
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/kchol/kchol/cholesky"
)

// progress shows how far cholesky.New has come on stderr: a bar redrawn in place when stderr
// is a terminal, plain lines every few seconds otherwise, and nothing for runs shorter than
// about two seconds or with -quiet.
type progress struct {
	w        io.Writer
	quiet    bool
	terminal bool
	start    time.Time
	last     time.Time
	drawn    bool // a bar is on the current line
}

// quietPeriod is how long a run must last before any progress is shown; linePeriod is the
// interval between plain lines when stderr is not a terminal.
const (
	quietPeriod = 2 * time.Second
	linePeriod  = 5 * time.Second
)

func newProgress(w io.Writer, quiet bool) *progress {
	p := &progress{w: w, quiet: quiet, start: time.Now()}
	if f, ok := w.(*os.File); ok {
		if info, err := f.Stat(); err == nil && info.Mode()&os.ModeCharDevice != 0 {
			p.terminal = true
		}
	}
	return p
}

func (p *progress) report(r cholesky.Progress) {
	if p.quiet {
		return
	}
	now := time.Now()
	if now.Sub(p.start) < quietPeriod {
		return
	}
	fraction := 1.0
	if r.Total > 0 {
		fraction = float64(r.Done) / float64(r.Total)
	}
	elapsed := now.Sub(p.start).Seconds()
	if p.terminal {
		if now.Sub(p.last) < 100*time.Millisecond && r.Done != r.Total {
			return
		}
		const width = 30
		filled := int(fraction * width)
		fmt.Fprintf(p.w, "\r%-12s [%s%s] %3.0f%%  %.1f s", r.Phase, strings.Repeat("#", filled), strings.Repeat(".", width-filled), 100*fraction, elapsed)
		p.drawn = true
	} else {
		if now.Sub(p.last) < linePeriod && r.Done != 0 && r.Done != r.Total {
			return
		}
		fmt.Fprintf(p.w, "kchol: %s %.0f%% after %.1f s\n", r.Phase, 100*fraction, elapsed)
	}
	p.last = now
}

// finish ends the bar's line so that the summary starts on a fresh one.
func (p *progress) finish() {
	if p.drawn {
		fmt.Fprintln(p.w)
		p.drawn = false
	}
}

// parseMemory parses -max-memory: "" means 80 % of physical memory (no limit when that is
// unknown), "0" no limit, otherwise a number of bytes with an optional unit (B, kB, MB, GB,
// TB, KiB, MiB, GiB, TiB).
func parseMemory(s string) (int64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return physicalMemory() / 5 * 4, nil
	}
	units := []struct {
		suffix string
		bytes  float64
	}{{"KiB", 1 << 10}, {"MiB", 1 << 20}, {"GiB", 1 << 30}, {"TiB", 1 << 40}, {"kB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"TB", 1e12}, {"B", 1}}
	scale := 1.0
	number := s
	for _, u := range units {
		if strings.HasSuffix(s, u.suffix) {
			number, scale = strings.TrimSpace(strings.TrimSuffix(s, u.suffix)), u.bytes
			break
		}
	}
	v, err := strconv.ParseFloat(number, 64)
	if err != nil || v < 0 || v*scale > 1<<62 {
		return 0, usagef("factor: -max-memory %q: want a size such as 4GiB, 500MB or 2e9", s)
	}
	return int64(v * scale), nil
}

// physicalMemory returns the machine's memory in bytes from /proc/meminfo, or 0 when it
// cannot be read (then there is no default limit).
func physicalMemory() int64 {
	data, err := os.ReadFile("/proc/meminfo")
	if err != nil {
		return 0
	}
	for _, line := range strings.Split(string(data), "\n") {
		fields := strings.Fields(line)
		if len(fields) >= 2 && fields[0] == "MemTotal:" {
			kb, err := strconv.ParseInt(fields[1], 10, 64)
			if err == nil {
				return kb * 1024
			}
		}
	}
	return 0
}
