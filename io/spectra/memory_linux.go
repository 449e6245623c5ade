package spectra

import "syscall"

// physicalMemory is the machine's RAM in bytes (sysinfo(2)), 0 if unknown.
func physicalMemory() int64 {
	var si syscall.Sysinfo_t
	if syscall.Sysinfo(&si) != nil {
		return 0
	}
	return int64(si.Totalram) * int64(si.Unit)
}
