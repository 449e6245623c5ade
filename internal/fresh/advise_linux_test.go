package fresh

import (
	"bufio"
	"fmt"
	"os"
	"strings"
	"testing"
	"unsafe"
)

// The advice reaches the kernel: the mapping that holds an advised matrix
// carries the "hg" flag in /proc/self/smaps (proc(5): VmFlags, "hg" = huge
// page advise flag), unless the system has transparent huge pages off.
func TestAdviceReachesTheKernel(t *testing.T) {
	mode, err := os.ReadFile("/sys/kernel/mm/transparent_hugepage/enabled")
	if err != nil || strings.Contains(string(mode), "[never]") {
		t.Skip("transparent huge pages are off or unknown here")
	}
	v := make([]float64, 4<<20/8*3) // 12 MiB: at least four whole huge pages
	Advise(v)
	addr := uintptr(unsafe.Pointer(&v[len(v)/2]))
	flags, err := vmFlags(addr)
	if err != nil {
		t.Skip(err)
	}
	if !strings.Contains(" "+flags+" ", " hg ") {
		t.Fatalf("mapping of the advised slice has VmFlags %q, want hg among them", flags)
	}
}

// vmFlags is the VmFlags line of the mapping in /proc/self/smaps holding addr.
func vmFlags(addr uintptr) (string, error) {
	f, err := os.Open("/proc/self/smaps")
	if err != nil {
		return "", err
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	inside := false
	for sc.Scan() {
		line := sc.Text()
		if fields := strings.Fields(line); len(fields) > 0 && !strings.HasSuffix(fields[0], ":") {
			var lo, hi uintptr // a mapping's header: "lo-hi perms offset dev inode [path]"
			if _, err := fmt.Sscanf(fields[0], "%x-%x", &lo, &hi); err == nil {
				inside = lo <= addr && addr < hi
			}
			continue
		}
		if inside && strings.HasPrefix(line, "VmFlags:") {
			return strings.TrimSpace(strings.TrimPrefix(line, "VmFlags:")), nil
		}
	}
	if err := sc.Err(); err != nil {
		return "", err
	}
	return "", fmt.Errorf("no mapping holds %#x", addr)
}
