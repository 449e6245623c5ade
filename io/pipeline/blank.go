package pipeline

import "slices"

// blankOf is the blank single beam experiment e is ratioed to ("" for
// none). One --blank serves every experiment; several pair with the --data
// inputs in their order (checkBlanks has matched the counts), since each
// experiment's cell and source may have their own background.
func blankOf(s *Settings, e int) string {
	switch len(s.Blanks) {
	case 0:
		return ""
	case 1:
		return s.Blanks[0]
	}
	return s.Blanks[e]
}

// hasBlank says whether any blank was given (an empty --blank is none, as
// an empty value is in a command file).
func hasBlank(s *Settings) bool {
	return slices.ContainsFunc(s.Blanks, func(b string) bool { return b != "" })
}

// checkBlanks refuses blanks that do not pair with the experiments: a
// second blank used to replace the first without a word, so a count other
// than one or one per experiment is an error rather than a guess.
func checkBlanks(s *Settings) error {
	n := len(s.Blanks)
	if n <= 1 {
		return nil
	}
	if n != len(s.Data) {
		return usage("--blank is given %d times for %d --data experiment(s): give one blank for them all, or one per experiment in the order of the --data flags", n, len(s.Data))
	}
	if slices.Contains(s.Blanks, "") {
		return usage("--blank: one of the %d blanks is empty: give every experiment's blank file, or one --blank for them all", n)
	}
	return nil
}

// blankOffsetAbsorbed says whether the resolution absorbs a blank's offset
// constant in time on the channels where the blank stood at the detector's
// ceiling (spectra.AssembleOptions.BlankOffsetFree): one experiment with its
// blank resolves species, and closure Σ_k c_k = T carries an offset −δ_j into
// every species' spectrum as −δ_j/T (C (S − δ1ᵀ/T)ᵀ = C Sᵀ − 1δᵀ). Not with
// closure weights (the offset would split by weight), without closure (no
// combination of free profiles need be constant), with several experiments
// (each blank its own offset) or with a known spectrum or a zero region
// (a spectrum fixed there cannot carry the offset).
func blankOffsetAbsorbed(s *Settings) bool {
	totals, err := parseTotals(s.Closure)
	return err == nil && totals != nil && len(totals) == 1 && s.ClosureWeights == "" &&
		len(s.Data) == 1 && hasBlank(s) && len(s.KnownSpectra) == 0 && len(s.ZeroRegions) == 0
}
