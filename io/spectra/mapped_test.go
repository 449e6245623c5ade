package spectra

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

// largeCSV writes a matrix CSV above mappedMin, so ReadMatrixCSV maps it.
func largeCSV(t *testing.T, bad string) string {
	t.Helper()
	var b bytes.Buffer
	b.WriteString("wavenumber")
	for j := 0; j < 40; j++ {
		fmt.Fprintf(&b, ",%d", 10*j)
	}
	b.WriteByte('\n')
	for i := 0; b.Len() < 2*mappedMin; i++ {
		fmt.Fprintf(&b, "%g", 4000-0.25*float64(i))
		for j := 0; j < 40; j++ {
			fmt.Fprintf(&b, ",%.7g", 1000+float64(i%97)*0.1+float64(j))
		}
		b.WriteByte('\n')
		if i == 5000 && bad != "" {
			b.WriteString(bad + "\n")
		}
	}
	p := filepath.Join(t.TempDir(), "big.csv")
	if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// The mapped file gives exactly the values of the same bytes read into a
// buffer (the parser is the same; only where the bytes live differs).
func TestReadMatrixCSVMappedSameAsRead(t *testing.T) {
	p := largeCSV(t, "")
	got, err := ReadMatrixCSV(p)
	if err != nil {
		t.Fatal(err)
	}
	raw, err := readAll(p)
	if err != nil {
		t.Fatal(err)
	}
	want, err := parseMatrixCSV(p, raw, -1)
	if err != nil {
		t.Fatal(err)
	}
	n, m := want.Values.Dims()
	if gn, gm := got.Values.Dims(); gn != n || gm != m || m < 5000 {
		t.Fatalf("dims %d×%d, want %d×%d (more than 5000 points)", gn, gm, n, m)
	}
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			if got.Values.At(i, j) != want.Values.At(i, j) {
				t.Fatalf("value %d,%d: %v mapped, %v read", i, j, got.Values.At(i, j), want.Values.At(i, j))
			}
		}
	}
	if got.AxisName != "wavenumber" || got.Names[3] != want.Names[3] {
		t.Errorf("axis name %q, names %q vs %q", got.AxisName, got.Names[3], want.Names[3])
	}
}

// A bad cell deep in a mapped file is reported at its line like in a small
// one (line 5003: header, 5001 rows before it, then the bad row).
func TestReadMatrixCSVMappedBadCell(t *testing.T) {
	p := largeCSV(t, "2749.5"+strings.Repeat(",1", 20)+",x"+strings.Repeat(",1", 19))
	_, err := ReadMatrixCSV(p)
	var ie *InputError
	if !errors.As(err, &ie) || ie.Line != 5003 || !strings.Contains(ie.Msg, `"x" is not a number`) {
		t.Fatalf("got %v, want a not-a-number error at line 5003", err)
	}
}

// A mapped file cut short by another program faults on the missing pages;
// guardFault turns that into an error (runtime/debug.SetPanicOnFault).
func TestGuardFaultTruncatedMapping(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("SIGBUS on a truncated mapping is Linux behaviour")
	}
	p := filepath.Join(t.TempDir(), "cut.csv")
	if err := os.WriteFile(p, bytes.Repeat([]byte("1,2\n"), 4*4096), 0o644); err != nil {
		t.Fatal(err)
	}
	b, release, err := mapFile(p, 4*4*4096)
	if err != nil {
		t.Fatal(err)
	}
	defer release()
	if err := os.Truncate(p, 0); err != nil {
		t.Fatal(err)
	}
	var x byte
	err = guardFault(func() { x = b[3*4096] })
	if err == nil {
		t.Fatalf("read %q from a truncated mapping without a fault", x)
	}
}
