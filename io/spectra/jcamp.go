package spectra

import (
	"path/filepath"
	"strings"
)

func isJCAMP(path string) bool {
	e := strings.ToLower(filepath.Ext(path))
	return e == ".jdx" || e == ".dx" || e == ".jcamp"
}

func readJCAMPSeries(path string) ([]*Spectrum, error) {
	return nil, inputErr(path, 0, "export as CSV for now", "JCAMP-DX reading is not wired in yet")
}

func seriesFromSpectra(path string, sps []*Spectrum, opt FolderOptions) (*Series, error) {
	return nil, inputErr(path, 0, "export as CSV for now", "JCAMP-DX reading is not wired in yet")
}
