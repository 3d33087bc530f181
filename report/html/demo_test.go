package html

import "math"

// demoPage is an invented scenario: a three-arm test of a shorter sign-up
// form over 14 days. It exercises every block type, one-sided and unbounded
// intervals, a NaN estimate, guard margins and links from numbers to CTEs.
func demoPage() Page {
	margin := -0.02
	marginLat := 0.05
	days := []string{"d1", "d2", "d3", "d4", "d5", "d6", "d7", "d8", "d9", "d10", "d11", "d12", "d13", "d14"}
	ctrl := []float64{1210, 1185, 1242, 1190, 1301, 980, 955, 1220, 1198, 1250, 1176, 1288, 1002, 947}
	short := []float64{1198, 1203, 1225, 1211, 1287, 991, 962, 1207, 1215, 1236, 1190, 1270, 1013, 951}
	hint := []float64{1205, 1190, 1238, 1199, 1295, 977, 970, 1213, 1202, 1244, 1183, 1279, 1008, 940}
	var cum []LinePoint
	est := []float64{0.041, 0.022, 0.030, 0.027, 0.025, 0.021, 0.024, 0.023, 0.022, 0.021, 0.020, 0.021, 0.0205, 0.0198}
	half := []float64{0.09, 0.065, 0.05, 0.042, 0.036, 0.031, 0.028, 0.026, 0.024, 0.022, 0.021, 0.020, 0.019, 0.018}
	for i := range est {
		cum = append(cum, LinePoint{Day: i + 1, Estimate: est[i], Low: est[i] - half[i], High: est[i] + half[i]})
	}
	return Page{
		Title: "Sign-up form length — results to day 14",
		Sections: []Section{
			{
				ID:      "summary",
				Heading: "Summary",
				Blocks: []Block{
					Paragraph{Text: "Three arms: the current form, a short form, and a short form with an inline hint. Intervals are 95% confidence intervals of the relative difference to control."},
					Table{
						ID:      "effects",
						Caption: "Effects against control",
						Header:  []string{"Metric", "Arm", "Control mean", "Arm mean", "Relative effect", "p-value"},
						Rows: [][]Cell{
							{{Text: "signups_7d"}, {Text: "short form"}, {Text: "0.1184", Numeric: true, Link: "#" + CTEID("per_unit")}, {Text: "0.1207", Numeric: true, Link: "#" + CTEID("per_unit")}, {Text: "+1.98%", Numeric: true, ID: "eff-signups"}, {Text: "0.0312", Numeric: true}},
							{{Text: "p95 page latency (ms)"}, {Text: "short form"}, {Text: "812.40", Numeric: true, Link: "#" + CTEID("latency")}, {Text: "829.10", Numeric: true}, {Text: "+2.06%", Numeric: true}, {Text: "0.2207", Numeric: true}},
						},
					},
				},
			},
			{
				ID:      "effects-plot",
				Heading: "Effects",
				Blocks: []Block{
					Forest{
						ID:    "forest",
						Title: "Relative effect of the short form, 95% intervals",
						Rows: []ForestRow{
							{Label: "signups_7d", Estimate: 0.0198, Low: 0.0018, High: 0.0378, Marker: MarkerPrimary, Note: "primary metric"},
							{Label: "form completion rate", Estimate: 0.0512, Low: 0.031, High: 0.0714, Marker: MarkerSecondary},
							{Label: "support contacts per unit", Estimate: -0.0123, Low: -0.048, High: 0.0234, Marker: MarkerSecondary},
							{Label: "refund rate", Estimate: -0.004, Low: -0.011, High: math.Inf(1), Marker: MarkerGuard, Margin: &margin, Note: "one-sided: harm is a fall"},
							{Label: "p95 page latency (ms)", Estimate: 0.0206, Low: math.Inf(-1), High: 0.041, Marker: MarkerGuard, Margin: &marginLat, Note: "one-sided: harm is a rise"},
							{Label: "days to first order", Estimate: math.NaN(), Low: math.NaN(), High: math.NaN(), Marker: MarkerSecondary, Note: "too few matured units"},
						},
					},
					Line{
						ID:     "cumulative",
						Title:  "Cumulative relative effect on signups_7d by day",
						Points: cum,
					},
				},
			},
			{
				ID:      "health",
				Heading: "Exposure and health",
				Blocks: []Block{
					Bars{
						ID:     "exposures",
						Title:  "Daily exposures per arm",
						Groups: days,
						Series: []Series{{Name: "control", Values: ctrl}, {Name: "short form", Values: short}, {Name: "short + hint", Values: hint}},
					},
					Funnel{
						ID:     "funnel",
						Title:  "Units per stage and arm",
						Stages: []string{"exposed", "triggered", "eligible", "mature"},
						Series: []Series{
							{Name: "control", Values: []float64{15944, 12011, 11890, 9875}},
							{Name: "short form", Values: []float64{15959, 12107, 11982, 9931}},
							{Name: "short + hint", Values: []float64{15943, 12050, 11911, 9902}},
						},
					},
				},
			},
			{
				ID:      "sql",
				Heading: "Query",
				Blocks: []Block{
					Details{
						Summary: "SQL that produced the numbers (DuckDB)",
						Blocks: []Block{
							SQL{
								ID:      "query",
								Caption: "Aggregates per arm",
								Fragments: []SQLFragment{
									{Text: "WITH\n"},
									{Name: "cohort", Text: "cohort AS (\n  SELECT unit_id, arm, min(ts) AS first_seen\n  FROM exposures\n  WHERE ts >= DATE '2026-11-01'\n  GROUP BY unit_id, arm\n),\n"},
									{Name: "per_unit", Text: "per_unit AS (\n  SELECT c.unit_id, c.arm, count(s.unit_id) > 0 AS signed_up\n  FROM cohort c LEFT JOIN signups s\n    ON s.unit_id = c.unit_id AND s.ts < c.first_seen + INTERVAL 7 DAY\n  GROUP BY c.unit_id, c.arm\n),\n"},
									{Name: "latency", Text: "latency AS (\n  SELECT c.arm, quantile_cont(p.ms, 0.95) AS p95\n  FROM cohort c JOIN page_loads p USING (unit_id)\n  GROUP BY c.arm\n)\n"},
									{Name: "final", ID: "final-select", Text: "SELECT arm, count(*) AS n, avg(signed_up::DOUBLE) AS mean\nFROM per_unit GROUP BY arm ORDER BY arm;"},
								},
							},
						},
					},
					Heading{Level: 3, Text: "Notes", ID: "notes"},
					Paragraph{Text: "Numbers link to the CTE that produced them; <b>markup</b> in text is escaped & shown as typed."},
				},
			},
		},
	}
}
