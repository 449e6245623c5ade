package pipeline

import (
	"fmt"
	"slices"
	"strings"

	"github.com/bandsolve/bandsolve/mcr"
)

// zeroEverywhere is a component that --zero-region (its spectrum) or
// --zero-window (its profile) holds at zero at every point: the
// component then describes nothing, which the resolution would otherwise
// report as a component that vanished, blaming the number of components.
type zeroEverywhere struct {
	comp  int      // 0-based
	flag  string   // "--zero-region" or "--zero-window"
	given []string // the values of that flag that name comp
}

// findZeroEverywhere records in r.Constraints each component whose zero
// mask covers every point (applyConstraints, after every window is set).
func findZeroEverywhere(r *Result, opt *mcr.Options) {
	find := func(masks [][]bool, flag string, given []string) {
		for j, mask := range masks {
			if len(mask) == 0 || slices.Contains(mask, false) {
				continue
			}
			var named []string
			for _, v := range given {
				if comps, _, _, err := zeroSpec(v, r.Components); err == nil && slices.Contains(comps, j) {
					named = append(named, v)
				}
			}
			if len(named) > 0 {
				r.Constraints.zeroEverywhere = append(r.Constraints.zeroEverywhere, zeroEverywhere{comp: j, flag: flag, given: named})
			}
		}
	}
	find(opt.ZeroSpectra, "--zero-region", r.Settings.ZeroRegions)
	find(opt.ZeroProfiles, "--zero-window", r.Settings.ZeroWindows)
}

// zeroEverywhereWarnings says, for each component held at zero at every
// point, which settings do it and what follows; dead marks those
// components (nil when there is none).
func zeroEverywhereWarnings(r *Result) (out []string, dead []bool) {
	if r.Constraints == nil {
		return nil, nil
	}
	for _, z := range r.Constraints.zeroEverywhere {
		if dead == nil {
			dead = make([]bool, r.Components)
		}
		dead[z.comp] = true
		what, where, fix := "spectrum", "every point of the axis", "give the region only where the component does not absorb"
		if z.flag == "--zero-window" {
			what, where, fix = "profile", "every spectrum's time", "give the window only where the component is absent"
		}
		out = append(out, fmt.Sprintf("%s %s covers %s: it forces component %d's %s to zero everywhere, so the component describes nothing and the fit has one component fewer than asked; %s (the constraint check below gives the fit without it), or ask for one component fewer (--components %d)",
			z.flag, strings.Join(z.given, ", "), where, z.comp+1, what, fix, max(r.Components-1, 1)))
	}
	return out, dead
}

// withoutVanishedWords drops ALS's "component j vanished" warning for the
// components dead marks: zeroEverywhereWarnings says why they vanished.
func withoutVanishedWords(ws []string, dead []bool) []string {
	if dead == nil {
		return ws
	}
	var out []string
	for _, w := range ws {
		drop := false
		for j, d := range dead {
			if d && strings.HasPrefix(w, fmt.Sprintf("component %d vanished:", j+1)) {
				drop = true
			}
		}
		if !drop {
			out = append(out, w)
		}
	}
	return out
}
