//go:build !unix

package spectra

import "errors"

// mapFile is not available here: readMapped falls back to reading.
func mapFile(string, int64) ([]byte, func(), error) {
	return nil, nil, errors.New("no memory mapping on this system")
}
