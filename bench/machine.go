package bench

import (
	"bufio"
	"os"
	"runtime"
	"runtime/debug"
	"strings"
)

// Machine describes the computer and build a report was measured with.
type Machine struct {
	// CPU is the model name from /proc/cpuinfo, or "unknown".
	CPU string `json:"cpu"`
	// Cores is runtime.NumCPU, the logical CPUs usable by the process.
	Cores int `json:"cores"`
	// GOMAXPROCS is the value in effect.
	GOMAXPROCS int    `json:"gomaxprocs"`
	GoVersion  string `json:"go_version"`
	OS         string `json:"os"`
	Arch       string `json:"arch"`
	// Kchol is the module version and VCS revision from the build information.
	Kchol string `json:"kchol_version"`
}

// DetectMachine returns the machine the program runs on. It reads /proc/cpuinfo on Linux and
// the build information of the binary; missing pieces are reported as "unknown".
func DetectMachine() Machine {
	return Machine{
		CPU:        cpuModel("/proc/cpuinfo"),
		Cores:      runtime.NumCPU(),
		GOMAXPROCS: runtime.GOMAXPROCS(0),
		GoVersion:  runtime.Version(),
		OS:         runtime.GOOS,
		Arch:       runtime.GOARCH,
		Kchol:      kcholVersion(),
	}
}

// cpuModel returns the first "model name" field of a cpuinfo file, or "unknown".
func cpuModel(path string) string {
	f, err := os.Open(path)
	if err != nil {
		return "unknown"
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		key, value, ok := strings.Cut(sc.Text(), ":")
		if ok && strings.TrimSpace(key) == "model name" {
			return strings.TrimSpace(value)
		}
	}
	return "unknown"
}

func kcholVersion() string {
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return "unknown"
	}
	v := info.Main.Version
	if v == "" {
		v = "unknown"
	}
	var rev, modified string
	for _, s := range info.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			if s.Value == "true" {
				modified = "+modified"
			}
		}
	}
	if rev != "" {
		v += " " + rev[:min(12, len(rev))] + modified
	}
	return v
}
