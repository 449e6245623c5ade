package mcr

import (
	"math"
	"testing"
)

// The extrapolation's step follows its documented rule (extrapolation in
// als.go); the expected steps and caps are worked by hand from it: growth
// 1.3 up to the cap, a rejection sends the step to 1, and from iteration
// 100 on a rejected step s caps the next ones at s/1.3 (not below 1.2),
// raised 2.5 % by each step kept at the cap; never above 20.
func TestExtrapolationStepRule(t *testing.T) {
	type event struct {
		it       int
		kept     bool
		step     float64 // after the event
		stepsCap float64
	}
	e := extrapolation{step: 1, cap: stepCap}
	events := []event{
		{1, true, 1.3, 20},
		{2, true, 1.69, 20},
		{3, true, 2.197, 20},
		{4, false, 1, 20}, // early: the cap is not learnt
		{5, true, 1.3, 20},
		{6, true, 1.69, 20},
		{7, true, 2.197, 20},
		{150, false, 1, 1.69}, // 2.197/1.3
		{151, true, 1.3, 1.69},
		{152, true, 1.69, 1.69},           // regrown to the cap
		{153, true, 1.73225, 1.73225},     // kept at the cap: ×1.025
		{154, true, 1.7755562, 1.7755562}, // and again
		{155, false, 1, 1.3658125},        // 1.7755562/1.3
		{200, false, 1, 1.2},              // 1/1.3 is below the floor
	}
	for _, ev := range events {
		if ev.kept {
			e.accepted(ev.it)
		} else {
			e.rejected(ev.it)
		}
		if math.Abs(e.step-ev.step) > 1e-7 || math.Abs(e.cap-ev.stepsCap) > 1e-7 {
			t.Fatalf("iteration %d (kept %v): step %.6g cap %.6g, want %.6g and %.6g", ev.it, ev.kept, e.step, e.cap, ev.step, ev.stepsCap)
		}
	}
	// Steps kept at the cap raise it past 20; the step stays at 20.
	e = extrapolation{step: 19, cap: 19.5}
	for it := 300; it < 320; it++ {
		e.accepted(it)
		if e.step > stepCap {
			t.Fatalf("iteration %d: step %g above %d", it, e.step, stepCap)
		}
	}
	if e.step != stepCap {
		t.Errorf("after 20 kept steps at the cap the step is %g, want %d", e.step, stepCap)
	}
}
