package stats

import (
	"math"
	"testing"
)

// TestWeekdayMix checks WeekdayMix against R's chisq.test on variants ×
// weekday tables (no continuity correction applies beyond 2×2).
// Source: R 4.2.2,
//
//	m <- matrix(c(1520,1480,1390,1405,1610,2050,2210, 1490,1502,1411,1380,1575,1890,2005), nrow=2, byrow=TRUE)
//	r <- chisq.test(m); sprintf("%.12g %g %.12g", r$statistic, r$parameter, r$p.value)
//	# 10.2923383793 6 0.112868657875
//	m3 <- matrix(c(300,310,295,305,320,410,450, 302,298,301,310,315,405,460, 299,305,300,298,330,420,440), nrow=3, byrow=TRUE)
//	# chisq.test(m3): 1.65174018435 12 0.999781689294
//	m0 <- matrix(c(100,0,120,130,90,80,70, 110,0,115,125,95,85,75), nrow=2, byrow=TRUE)
//	# chisq.test(m0[, -2]) (the empty day dropped): 0.951542156762 5 0.966378780071
func TestWeekdayMix(t *testing.T) {
	tests := []struct {
		name          string
		counts        [][7]float64
		x2, df, wantP float64
	}{
		{"two variants", [][7]float64{
			{1520, 1480, 1390, 1405, 1610, 2050, 2210},
			{1490, 1502, 1411, 1380, 1575, 1890, 2005},
		}, 10.2923383793, 6, 0.112868657875},
		{"three variants", [][7]float64{
			{300, 310, 295, 305, 320, 410, 450},
			{302, 298, 301, 310, 315, 405, 460},
			{299, 305, 300, 298, 330, 420, 440},
		}, 1.65174018435, 12, 0.999781689294},
		{"a day without units", [][7]float64{
			{100, 0, 120, 130, 90, 80, 70},
			{110, 0, 115, 125, 95, 85, 75},
		}, 0.951542156762, 5, 0.966378780071},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := WeekdayMix(tc.counts)
			checkNear(t, "Statistic", r.Statistic, tc.x2, 1e-10)
			checkNear(t, "DF", r.DF, tc.df, 0)
			checkNear(t, "PValue", r.PValue, tc.wantP, 1e-9)
			if len(r.Expected) != len(tc.counts) || len(r.Expected[0]) != 7 {
				t.Errorf("Expected has shape %d×%d, want %d×7", len(r.Expected), len(r.Expected[0]), len(tc.counts))
			}
		})
	}
	for name, counts := range map[string][][7]float64{
		"no variants":  nil,
		"one variant":  {{1, 2, 3, 4, 5, 6, 7}},
		"negative":     {{1, 2, 3, 4, 5, 6, -7}, {1, 2, 3, 4, 5, 6, 7}},
		"one day only": {{10, 0, 0, 0, 0, 0, 0}, {12, 0, 0, 0, 0, 0, 0}},
	} {
		if r := WeekdayMix(counts); r.Reason == "" || !math.IsNaN(r.PValue) {
			t.Errorf("%s: got %+v, want NaN and a reason", name, r)
		}
	}
}
