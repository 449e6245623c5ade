//go:build linux && !amd64 && !arm64

package output

// Other Linux architectures use the recorded two-step swap.
const sysRenameat2 = 0
