package html

import (
	"fmt"
	"math"
	"testing"
)

// Expected values follow the rules of P. S. Heckbert, "Nice Numbers for
// Graph Labels", Graphics Gems (1990), worked by hand: nicenum rounds the
// fraction f = x/10^floor(log10 x) to 1, 2, 5 or 10 (round: cut points 1.5,
// 3, 7; otherwise the smallest of 1, 2, 5, 10 not below f).
func TestNiceNum(t *testing.T) {
	cases := []struct {
		x     float64
		round bool
		want  float64
	}{
		{438, false, 500}, // f = 4.38 → 5
		{125, true, 100},  // f = 1.25 < 1.5 → 1
		{0.0123, true, 0.01},
		{0.0123, false, 0.02},
		{3.2, false, 5},
		{2, false, 2},
		{1, false, 1},
		{2.9, true, 2},
		{3, true, 5},
		{7, true, 10},
		{68, true, 50}, // f = 6.8 < 7 → 5
		{0, true, 0},   // outside the precondition
		{-3, true, 0},  // outside the precondition
	}
	for _, tc := range cases {
		t.Run(fmt.Sprint(tc.x, tc.round), func(t *testing.T) {
			got := NiceNum(tc.x, tc.round)
			if math.Abs(got-tc.want) > 1e-12*math.Max(1, tc.want) {
				t.Errorf("got %v, want %v", got, tc.want)
			}
		})
	}
}

func TestNiceTicks(t *testing.T) {
	cases := []struct {
		name   string
		lo, hi float64
		n      int
		want   []string
	}{
		// range = nicenum(438) = 500; step = nicenum(125, round) = 100.
		{"105 to 543", 105, 543, 5, []string{"100", "200", "300", "400", "500", "600"}},
		// range = nicenum(7.14+4.8=11.94) = 20; step = nicenum(4, round) = 5.
		{"percent effects", -4.8, 7.14, 5, []string{"-5", "0", "5", "10"}},
		// range = nicenum(0.3) = 0.5; step = nicenum(0.1, round) = 0.1; frac = 1.
		{"tenths", 0, 0.3, 6, []string{"0.0", "0.1", "0.2", "0.3"}},
		// range = nicenum(0.87) = 1; step = nicenum(0.25, round) = 0.2.
		{"negative only", -0.87, 0, 5, []string{"-1.0", "-0.8", "-0.6", "-0.4", "-0.2", "0.0"}},
		// lo == hi == 0 is widened to [-1, 1]; range 2, step nicenum(0.5) = 0.5.
		{"degenerate", 0, 0, 5, []string{"-1.0", "-0.5", "0.0", "0.5", "1.0"}},
		// range = nicenum(1595.9) = 2000; step = nicenum(400, round) = 500.
		{"counts", 0, 1595.9, 5, []string{"0", "500", "1000", "1500", "2000"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			tk := NiceTicks(tc.lo, tc.hi, tc.n)
			var got []string
			for _, v := range tk.Values() {
				got = append(got, tk.Label(v))
			}
			if fmt.Sprint(got) != fmt.Sprint(tc.want) {
				t.Errorf("got %v, want %v", got, tc.want)
			}
			if tk.Min > tc.lo || tk.Max < tc.hi {
				t.Errorf("ticks [%v, %v] do not cover [%v, %v]", tk.Min, tk.Max, tc.lo, tc.hi)
			}
		})
	}
}

func ExampleNiceTicks() {
	// range = nicenum(5.9) = 10; step = nicenum(10/5, round) = 2;
	// min = floor(-1.1/2)·2 = -2, max = ceil(4.8/2)·2 = 6 (by hand).
	t := NiceTicks(-1.1, 4.8, 6)
	for _, v := range t.Values() {
		fmt.Print(t.Label(v), " ")
	}
	fmt.Println()
	// Output: -2 0 2 4 6
}
