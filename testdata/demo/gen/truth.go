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
	dryRunArm                     [2]int // triggered customers with a dry-run home exposure, per arm

	// Per rollout step (of the trigger) and arm: triggered customers, and
	// the units the analysis keeps before maturity (eligible, single
	// variant, not in the dry run).
	stepTriggered, stepKept [][2]int

	// Realized sums over analysable customers, per step and arm, within
	// [trigger, trigger+14d).
	step [][2]sums

	rows map[string]int
}

// sums are the realized outcomes of analysable customers of one step and
// arm, with the planted effect of the shelf on their orders.
type sums struct {
	n, orders, cancelled, contacts, taps int
	amount, planted                      float64
}

// add adds u to s.
func (s *sums) add(u sums) {
	s.n += u.n
	s.orders += u.orders
	s.cancelled += u.cancelled
	s.contacts += u.contacts
	s.taps += u.taps
	s.amount += u.amount
	s.planted += u.planted
}

// pooled returns the sums of arm a over every step.
func (st stats) pooled(a int) sums {
	var out sums
	for _, s := range st.step {
		out.add(s[a])
	}
	return out
}

// summarize counts the customer categories and realized outcomes of ds.
func summarize(ds *dataset) stats {
	st := stats{rows: map[string]int{
		"customers": len(ds.customers), "exposures": len(ds.exposures), "orders": len(ds.orders),
		"taps": len(ds.taps), "support": len(ds.contacts),
	}}
	st.stepTriggered = make([][2]int, len(schedule))
	st.stepKept = make([][2]int, len(schedule))
	st.step = make([][2]sums, len(schedule))
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
		st.stepTriggered[c.step][a]++
		if c.dryRun {
			st.dryRun++
			st.dryRunArm[a]++
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
		// The spec declares the dry run under [prior_runs]: its customers
		// are left out of the analysis, like crossovers.
		if c.crossover || c.dryRun {
			continue
		}
		st.stepKept[c.step][a]++
		if mature {
			st.analysable[a]++
			analysable[c.id] = c
			st.step[c.step][a].n++
			st.step[c.step][a].planted += c.planted
		}
	}
	in := func(id, at int64) (*sums, bool) {
		c, ok := analysable[id]
		if !ok || at < c.trigger || at >= c.trigger+horizon {
			return nil, false
		}
		return &st.step[c.step][arm(c.variant)], true
	}
	for _, o := range ds.orders {
		if s, ok := in(o.customerID, o.at); ok {
			if o.cancelled {
				s.cancelled++
				continue
			}
			s.orders++
			s.amount += o.amount
		}
	}
	for _, c := range ds.contacts {
		if s, ok := in(c.customerID, c.at); ok {
			s.contacts++
		}
	}
	for _, t := range ds.taps {
		if s, ok := in(t.customerID, t.at); ok {
			s.taps++
		}
	}
	return st
}

// realized holds per-arm outcome averages of analysable customers.
type realized struct {
	ordersPer, aov, cancelRate, contactsPer, tapsPer [2]float64
}

// realize turns the sums of st, pooled over the steps, into averages.
func (st stats) realize() realized {
	return realizeSums([2]sums{st.pooled(0), st.pooled(1)})
}

// realizeSums turns per-arm sums into averages.
func realizeSums(s [2]sums) realized {
	var r realized
	for a := range 2 {
		n := float64(s[a].n)
		r.ordersPer[a] = float64(s[a].orders) / n
		r.aov[a] = s[a].amount / float64(s[a].orders)
		r.cancelRate[a] = float64(s[a].cancelled) / float64(s[a].orders+s[a].cancelled)
		r.contactsPer[a] = float64(s[a].contacts) / n
		r.tapsPer[a] = float64(s[a].taps) / n
	}
	return r
}

// stepRow is the orders_14d reading of one rollout step: its share of the
// analysable customers, the arms' realized means, their difference, and
// the planted difference (the mean planted effect of the step's customers
// of both arms).
type stepRow struct {
	weight, control, shelf, diff, planted float64
}

// byStep returns the per-step rows of orders_14d and their combinations
// weighted by each step's share of analysable customers (post-
// stratification): the realized by-step difference and the planted one.
func (st stats) byStep() (rows []stepRow, diff, planted float64) {
	var total float64
	for _, s := range st.step {
		total += float64(s[0].n + s[1].n)
	}
	for _, s := range st.step {
		n := float64(s[0].n + s[1].n)
		r := stepRow{weight: n / total,
			control: float64(s[0].orders) / float64(s[0].n), shelf: float64(s[1].orders) / float64(s[1].n),
			planted: (s[0].planted + s[1].planted) / n}
		r.diff = r.shelf - r.control
		rows = append(rows, r)
		diff += r.weight * r.diff
		planted += r.weight * r.planted
	}
	return rows, diff, planted
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
	fmt.Fprintf(&b, "analysable (eligible, mature, single variant, not in the dry run) %d (control %d, shelf %d)\n",
		st.analysable[0]+st.analysable[1], st.analysable[0], st.analysable[1])
	rows, diff, planted := st.byStep()
	for i, sr := range rows {
		fmt.Fprintf(&b, "step %s: triggered %d/%d, kept %d/%d, analysable %d/%d, weight %.4f, orders %.4f vs %.4f, diff %+.4f, planted %+.4f\n",
			schedule[i].name, st.stepTriggered[i][0], st.stepTriggered[i][1], st.stepKept[i][0], st.stepKept[i][1],
			st.step[i][0].n, st.step[i][1].n, sr.weight, sr.control, sr.shelf, sr.diff, sr.planted)
	}
	fmt.Fprintf(&b, "realized orders/customer 14d control %.4f shelf %.4f (pooled %+.4f, %+.2f%%); by step %+.4f, planted %+.4f; basket %.2f vs %.2f (%+.2f%%)\n",
		r.ordersPer[0], r.ordersPer[1], r.ordersPer[1]-r.ordersPer[0], lift(r.ordersPer), diff, planted, r.aov[0], r.aov[1], lift(r.aov))
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
		"Variants `control` and `shelf`, assigned by hashing the customer id under a launch schedule (below) that ends at the planned 50/50. " +
		"The shelf is visible only on `surface = 'home'`, so the trigger is the first home exposure in the window [2026-03-02, 2026-04-13). " +
		"Eligible: at least one non-cancelled order in [trigger - 60 days, trigger). All times are UTC.")
	p("")
	p("## Launch schedule")
	p("")
	p("The shelf was launched in steps. A customer's variant is decided by the step in force at his trigger: shelf when the " +
		"FNV-1a hash of `reorder-shelf:<id>` modulo 100 is at least 100 minus the step's shelf percentage, so the thresholds nest " +
		"(a customer in shelf in the test step would be in shelf in every later step). All his exposure rows carry that variant. " +
		"Support contacts, customers and the pre-period visits do not depend on the schedule or the sale below: their files are the same as under a plain 50/50 hash.")
	p("")
	p("| step | from (UTC) | until (UTC) | control | shelf |")
	p("|---|---|---|---|---|")
	for i, sp := range schedule {
		until := windowEnd
		if i+1 < len(schedule) {
			until = schedule[i+1].start
		}
		p("| %s | %s | %s | %d%% | %d%% |", sp.name, ts(sp.start)[:10], ts(until)[:10], 100-sp.shelfPct, sp.shelfPct)
	}
	p("")
	p("## Calendar")
	p("")
	p("Spring pantry sale in [%s, %s) (Friday to Sunday): every customer's order rate is multiplied by %.1f, in both variants, "+
		"before and after the trigger (the sale's extra orders are a Poisson process of their own, so the planted relative effect is unchanged). "+
		"Customers triggered in the early steps have the whole sale inside their 14-day window, later ones part of it or none, "+
		"so orders per customer drift down over trigger days while the shelf share rises: pooling the steps mixes the arms in different proportions "+
		"of high-order and low-order days and understates the effect.", ts(saleStart)[:10], ts(saleEnd)[:10], saleBoost)
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
	p("Baseline: per-customer order rate ~ Gamma(shape %.0f) with mean %.2f per day, stationary before and after the trigger except during the sale.", orderRateShape, orderRateMean)
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
	p("| triggered after a dry-run home exposure (prior run, left out) | %d | %d | %d |", st.dryRunArm[0], st.dryRunArm[1], st.dryRun)
	p("| eligible, mature, single variant, not in the dry run | %d | %d | %d |", st.analysable[0], st.analysable[1], st.analysable[0]+st.analysable[1])
	p("")
	p("By step of the trigger. \"Kept\" are the eligible, single-variant customers not in the dry run, mature or not (the eligible units of the report's per-step sample-ratio check); \"analysable\" are the mature ones among them.")
	p("")
	p("| step | triggered control | triggered shelf | kept control | kept shelf | analysable control | analysable shelf |")
	p("|---|---|---|---|---|---|---|")
	for i, sp := range schedule {
		p("| %s | %d | %d | %d | %d | %d | %d |", sp.name, st.stepTriggered[i][0], st.stepTriggered[i][1], st.stepKept[i][0], st.stepKept[i][1], st.step[i][0].n, st.step[i][1].n)
	}
	p("")
	p("Planted quirks: %d triggered customers have a search/checkout exposure before their first home one; "+
		"%d have a home exposure in the pre-launch dry run (2026-02-26..03-01, outside the window; the shelf rendered empty, so no effect on outcomes; the demo spec declares it under [prior_runs], so they are left out) and trigger later inside it; "+
		"%d have an exposure after 2026-04-13. Boundary orders (all delivered): %d active customers with an order exactly at the trigger, "+
		"%d with one 1 second before; %d new customers whose first order is exactly at the trigger (ineligible: the look-back is half-open); "+
		"%d lapsed customers whose only look-back order is 1 second before the trigger (eligible; it is not an outcome).",
		st.searchPre, st.dryRun, st.stray, st.roles[roleActiveAtTrigger], st.roles[roleActiveBeforeTrigger],
		st.roles[roleNewAtTrigger], st.roles[roleLapsedBeforeTrigger])
	p("")
	p("Crossovers get one extra exposure row with the other variant after their trigger; their outcomes follow their assigned variant. " +
		"Customers never on the home screen take the variant of the step in force at their first exposure; those seen only in the dry run, the test step's.")
	p("")
	p("## Realized in this draw")
	p("")
	p("Eligible, mature, single-variant customers not in the dry run, outcomes in [trigger, trigger + 14 days), every step pooled (the naive reading):")
	p("")
	p("| metric | control | shelf | relative |")
	p("|---|---|---|---|")
	p("| non-cancelled orders per customer | %.4f | %.4f | %+.2f%% |", r.ordersPer[0], r.ordersPer[1], lift(r.ordersPer))
	p("| basket value per non-cancelled order | %.2f | %.2f | %+.2f%% |", r.aov[0], r.aov[1], lift(r.aov))
	p("| cancelled share of orders | %.4f | %.4f | |", r.cancelRate[0], r.cancelRate[1])
	p("| support contacts per customer | %.4f | %.4f | |", r.contactsPer[0], r.contactsPer[1])
	p("| shelf taps per customer | %.3f | %.3f | |", r.tapsPer[0], r.tapsPer[1])
	p("")
	rows, diff, planted := st.byStep()
	p("Non-cancelled orders per customer by step of the trigger. The weight is the step's share of the analysable customers of both arms; "+
		"the planted difference is the mean, over the step's analysable customers of both arms, of the expected extra orders the shelf causes "+
		"(%+.0f%% of each customer's expected baseline orders in his window, sale included).", 100*(orderLift-1))
	p("")
	p("| step | weight | control | shelf | difference | planted difference |")
	p("|---|---|---|---|---|---|")
	for i, sr := range rows {
		p("| %s | %.4f | %.4f | %.4f | %+.4f | %+.4f |", schedule[i].name, sr.weight, sr.control, sr.shelf, sr.diff, sr.planted)
	}
	p("")
	p("| orders per customer, shelf - control | difference |")
	p("|---|---|")
	p("| pooled over the steps (naive) | %+.4f |", r.ordersPer[1]-r.ordersPer[0])
	p("| by step (weighted by step share) | %+.4f |", diff)
	p("| planted, by step | %+.4f |", planted)
	p("")
	p("## Pre-period for planning")
	p("")
	p("visits.parquet holds screen visits in the four whole weeks [%s, %s), before any exposure of the experiment: "+
		"%.2f per day for active customers, %.2f for lapsed and %.2f for new ones (after signing up), %.0f%% of them on the home screen. "+
		"A home-screen visit is the stand-in trigger of the demo's [planning] table. Nothing is planted in the pre-period.",
		ts(preStart)[:10], ts(preEnd)[:10], visitRateActive, visitRateLapsed, visitRateNew, homeShare*100)
	return b.String()
}
