//go:build !linux

package output

import "errors"

// Elsewhere the commit uses the recorded two-step swap.
func renameExchange(a, b string) error { return errNoExchange }

var errNoExchange = errors.New("no atomic exchange on this system")
