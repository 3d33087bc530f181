package main

import (
	"fmt"
	"strings"
)

// arm indexes per-variant counters: 0 is control, 1 is shelf.
func arm(v string) int {
	if v == shelf {
		return 1
	}
	return 0
}

// stats are the category counts and realized outcomes of one data set.
type stats struct {
	customers, exposed, unexposed int
	triggered                     [2]int
	noHome, dryOnly               int
	eligible                      [2]int
	ineligibleNew, ineligibleLaps int
	ineligibleActive              int
	crossovers                    int
	immature, immatureEligible    int
	dryRun, stray, searchPre      int
	roles                         [5]int
	analysable                    [2]int

	// Realized sums over analysable customers, per arm, within [trigger, trigger+14d).
	orders, cancelled [2]int
	amount            [2]float64
	contacts, taps    [2]int

	rows map[string]int
}

// summarize counts the customer categories and realized outcomes of ds.
func summarize(ds *dataset) stats {
	st := stats{rows: map[string]int{
		"customers": len(ds.customers), "exposures": len(ds.exposures), "orders": len(ds.orders),
		"taps": len(ds.taps), "support": len(ds.contacts),
	}}
	analysable := map[int64]*customer{}
	for i := range ds.customers {
		c := &ds.customers[i]
		st.customers++
		if !c.exposed {
			st.unexposed++
			continue
		}
		st.exposed++
		if c.crossover {
			st.crossovers++
		}
		if c.stray {
			st.stray++
		}
		st.roles[c.role]++
		switch {
		case c.noHome:
			st.noHome++
		case c.dryOnly:
			st.dryOnly++
		}
		if c.trigger == 0 {
			continue
		}
		a := arm(c.variant)
		st.triggered[a]++
		if c.dryRun {
			st.dryRun++
		}
		if c.searchPre {
			st.searchPre++
		}
		mature := c.trigger < matureCutoff
		if !mature {
			st.immature++
		}
		if !c.eligible {
			switch c.kind {
			case kindNew:
				st.ineligibleNew++
			case kindLapsed:
				st.ineligibleLaps++
			default:
				st.ineligibleActive++
			}
			continue
		}
		st.eligible[a]++
		if !mature {
			st.immatureEligible++
		}
		if mature && !c.crossover {
			st.analysable[a]++
			analysable[c.id] = c
		}
	}
	in := func(id, at int64) (int, bool) {
		c, ok := analysable[id]
		if !ok || at < c.trigger || at >= c.trigger+horizon {
			return 0, false
		}
		return arm(c.variant), true
	}
	for _, o := range ds.orders {
		if a, ok := in(o.customerID, o.at); ok {
			if o.cancelled {
				st.cancelled[a]++
				continue
			}
			st.orders[a]++
			st.amount[a] += o.amount
		}
	}
	for _, s := range ds.contacts {
		if a, ok := in(s.customerID, s.at); ok {
			st.contacts[a]++
		}
	}
	for _, t := range ds.taps {
		if a, ok := in(t.customerID, t.at); ok {
			st.taps[a]++
		}
	}
	return st
}

// realized holds per-arm outcome averages of analysable customers.
type realized struct {
	ordersPer, aov, cancelRate, contactsPer, tapsPer [2]float64
}

// realize turns the sums of st into averages.
func (st stats) realize() realized {
	var r realized
	for a := range 2 {
		n := float64(st.analysable[a])
		r.ordersPer[a] = float64(st.orders[a]) / n
		r.aov[a] = st.amount[a] / float64(st.orders[a])
		r.cancelRate[a] = float64(st.cancelled[a]) / float64(st.orders[a]+st.cancelled[a])
		r.contactsPer[a] = float64(st.contacts[a]) / n
		r.tapsPer[a] = float64(st.taps[a]) / n
	}
	return r
}

// lift returns the relative difference of shelf over control in percent.
func lift(v [2]float64) float64 { return 100 * (v[1]/v[0] - 1) }

// text renders the counts for standard error.
func (st stats) text() string {
	var b strings.Builder
	r := st.realize()
	fmt.Fprintf(&b, "customers %d (exposed %d, never exposed %d)\n", st.customers, st.exposed, st.unexposed)
	fmt.Fprintf(&b, "triggered %d (control %d, shelf %d); not triggered %d (no home %d, dry run only %d)\n",
		st.triggered[0]+st.triggered[1], st.triggered[0], st.triggered[1], st.noHome+st.dryOnly, st.noHome, st.dryOnly)
	fmt.Fprintf(&b, "eligible %d (control %d, shelf %d); ineligible %d (new %d, lapsed %d, sparse active %d)\n",
		st.eligible[0]+st.eligible[1], st.eligible[0], st.eligible[1],
		st.ineligibleNew+st.ineligibleLaps+st.ineligibleActive, st.ineligibleNew, st.ineligibleLaps, st.ineligibleActive)
	fmt.Fprintf(&b, "crossovers %d; immature triggers %d (eligible %d); dry-run then trigger %d; stray after end %d\n",
		st.crossovers, st.immature, st.immatureEligible, st.dryRun, st.stray)
	fmt.Fprintf(&b, "analysable (eligible, mature, single variant) %d (control %d, shelf %d)\n",
		st.analysable[0]+st.analysable[1], st.analysable[0], st.analysable[1])
	fmt.Fprintf(&b, "realized orders/customer 14d control %.4f shelf %.4f (%+.2f%%); basket %.2f vs %.2f (%+.2f%%)\n",
		r.ordersPer[0], r.ordersPer[1], lift(r.ordersPer), r.aov[0], r.aov[1], lift(r.aov))
	fmt.Fprintf(&b, "rows: customers %d, exposures %d, orders %d, taps %d, support %d\n",
		st.rows["customers"], st.rows["exposures"], st.rows["orders"], st.rows["taps"], st.rows["support"])
	return b.String()
}

// truthMarkdown renders TRUTH.md for the run described by cfg.
func truthMarkdown(cfg config, st stats) string {
	r := st.realize()
	var b strings.Builder
	p := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	p("# Reorder shelf demo data: ground truth")
	p("")
	p("Generated by `go run ./testdata/demo/gen -seed %d -customers %d -out %s` (run from the repository root). "+
		"Do not edit by hand; rerun the generator, whose output is byte-identical for the same flags.", cfg.seed, cfg.customers, cfg.out)
	p("")
	p("Scenario (invented): a grocery-delivery app shows a row of previously bought items on the home screen. " +
		"Variants `control` and `shelf`, planned 50/50 by hashing the customer id. The shelf is visible only on " +
		"`surface = 'home'`, so the trigger is the first home exposure in the window [2026-03-02, 2026-04-13). " +
		"Eligible: at least one non-cancelled order in [trigger - 60 days, trigger). All times are UTC.")
	p("")
	p("## Planted effects")
	p("")
	p("Applied only to eligible `shelf` customers, from the trigger instant onwards (ineligible customers see an empty shelf and are unaffected):")
	p("")
	p("| metric | planted |")
	p("|---|---|")
	p("| non-cancelled orders per customer, 14 days | x%.2f (%+.0f%%) |", orderLift, 100*(orderLift-1))
	p("| basket value per order | x%.2f (%+.0f%%) |", basketFactor, 100*(basketFactor-1))
	p("| cancellation probability per order | unchanged (%.2f) |", cancelProb)
	p("| support contacts per customer, 14 days | unchanged (%.2f) |", supportPer14)
	p("| shelf taps per customer, 14 days | Poisson(%.0f) in shelf, none in control |", tapsPer14)
	p("")
	p("Baseline: per-customer order rate ~ Gamma(shape %.0f) with mean %.2f per day, stationary before and after the trigger.", orderRateShape, orderRateMean)
	p("")
	p("## Counts")
	p("")
	p("| category | control | shelf | total |")
	p("|---|---|---|---|")
	p("| exposed customers | | | %d |", st.exposed)
	p("| never exposed (orders and support only) | | | %d |", st.unexposed)
	p("| triggered | %d | %d | %d |", st.triggered[0], st.triggered[1], st.triggered[0]+st.triggered[1])
	p("| not triggered: never on home | | | %d |", st.noHome)
	p("| not triggered: home only before the window | | | %d |", st.dryOnly)
	p("| eligible (triggered) | %d | %d | %d |", st.eligible[0], st.eligible[1], st.eligible[0]+st.eligible[1])
	p("| ineligible triggered: new / lapsed / sparse active | | | %d / %d / %d |", st.ineligibleNew, st.ineligibleLaps, st.ineligibleActive)
	p("| crossovers (rows in both variants) | | | %d |", st.crossovers)
	p("| immature triggers (>= 2026-03-30), of which eligible | | | %d, %d |", st.immature, st.immatureEligible)
	p("| eligible, mature, single variant | %d | %d | %d |", st.analysable[0], st.analysable[1], st.analysable[0]+st.analysable[1])
	p("")
	p("Planted quirks: %d triggered customers have a search/checkout exposure before their first home one; "+
		"%d have a home exposure in the pre-launch dry run (2026-02-26..03-01, outside the window; the shelf rendered empty, so no effect) and trigger later inside it; "+
		"%d have an exposure after 2026-04-13. Boundary orders (all delivered): %d active customers with an order exactly at the trigger, "+
		"%d with one 1 second before; %d new customers whose first order is exactly at the trigger (ineligible: the look-back is half-open); "+
		"%d lapsed customers whose only look-back order is 1 second before the trigger (eligible; it is not an outcome).",
		st.searchPre, st.dryRun, st.stray, st.roles[roleActiveAtTrigger], st.roles[roleActiveBeforeTrigger],
		st.roles[roleNewAtTrigger], st.roles[roleLapsedBeforeTrigger])
	p("")
	p("Crossovers get one extra exposure row with the other variant after their trigger; their outcomes follow their hashed variant.")
	p("")
	p("## Realized in this draw")
	p("")
	p("Eligible, mature, single-variant customers, outcomes in [trigger, trigger + 14 days):")
	p("")
	p("| metric | control | shelf | relative |")
	p("|---|---|---|---|")
	p("| non-cancelled orders per customer | %.4f | %.4f | %+.2f%% |", r.ordersPer[0], r.ordersPer[1], lift(r.ordersPer))
	p("| basket value per non-cancelled order | %.2f | %.2f | %+.2f%% |", r.aov[0], r.aov[1], lift(r.aov))
	p("| cancelled share of orders | %.4f | %.4f | |", r.cancelRate[0], r.cancelRate[1])
	p("| support contacts per customer | %.4f | %.4f | |", r.contactsPer[0], r.contactsPer[1])
	p("| shelf taps per customer | %.3f | %.3f | |", r.tapsPer[0], r.tapsPer[1])
	p("")
	p("## Pre-period for planning")
	p("")
	p("visits.parquet holds screen visits in the four whole weeks [%s, %s), before any exposure of the experiment: "+
		"%.2f per day for active customers, %.2f for lapsed and %.2f for new ones (after signing up), %.0f%% of them on the home screen. "+
		"A home-screen visit is the stand-in trigger of the demo's [planning] table. Nothing is planted in the pre-period.",
		ts(preStart)[:10], ts(preEnd)[:10], visitRateActive, visitRateLapsed, visitRateNew, homeShare*100)
	return b.String()
}
