package main

import (
	"cmp"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"time"
)

// Times are kept as Unix seconds (UTC) throughout the simulation.
const (
	secPerDay = int64(24 * 60 * 60)
	lookback  = 60 * secPerDay
	horizon   = 14 * secPerDay
)

// unixDate returns the Unix time of midnight UTC on the given date.
func unixDate(y int, m time.Month, d int) int64 {
	return time.Date(y, m, d, 0, 0, 0, 0, time.UTC).Unix()
}

// Calendar of the scenario.
var (
	dataStart    = unixDate(2026, time.January, 1)   // first outcome event
	dryRunStart  = unixDate(2026, time.February, 26) // pre-launch dry run (shelf rendered empty)
	windowStart  = unixDate(2026, time.March, 2)     // analysis window start (inclusive)
	windowEnd    = unixDate(2026, time.April, 13)    // analysis window end (exclusive); outcome data stop here
	matureCutoff = windowEnd - horizon               // triggers at or after this instant are immature
	signupFloor  = unixDate(2021, time.June, 1)
	saleStart    = unixDate(2026, time.March, 13) // spring pantry sale, Friday to Sunday
	saleEnd      = unixDate(2026, time.March, 16) // first moment after the sale
)

// step is one step of the launch schedule: from start until the next step's
// start, a customer triggered then is in the shelf variant with probability
// shelfPct/100.
type step struct {
	name     string
	start    int64
	shelfPct int
}

// schedule is the launch: a small test step, a ramp, then the planned 50/50.
// Each step begins at midnight UTC; the first at the analysis start.
var schedule = []step{
	{"test", windowStart, 5},
	{"ramp", unixDate(2026, time.March, 5), 25},
	{"full", unixDate(2026, time.March, 9), 50},
}

// stepAt returns the index of the step in force at t: the last step that
// began at or before t, the first step for earlier times.
func stepAt(t int64) int {
	i := 0
	for j, s := range schedule {
		if s.start <= t {
			i = j
		}
	}
	return i
}

// Variant names.
const (
	control = "control"
	shelf   = "shelf"
)

// Planted parameters. The effects apply only to eligible customers in the
// shelf variant, from their trigger onwards.
const (
	orderLift      = 1.08 // multiplier on the order rate (so on the non-cancelled order rate)
	basketFactor   = 0.98 // multiplier on basket value per order
	cancelProb     = 0.07 // cancellation probability per order, identical in both variants
	orderRateMean  = 0.10 // mean baseline orders per day of an active customer
	orderRateShape = 2.0  // gamma shape of the per-customer order rate
	supportPer14   = 0.05 // support contacts per customer per 14 days, identical in both variants
	tapsPer14      = 3.0  // shelf taps per eligible treated customer per 14 days
	maxExposures   = 6    // exposure rows per exposed customer are between 1 and this
	saleBoost      = 2.0  // order rate multiplier of everyone during the pantry sale
)

// kind is the latent ordering behaviour of a customer.
type kind int

const (
	kindActive kind = iota // orders steadily at a gamma-distributed rate
	kindLapsed             // stopped ordering well before the trigger, may come back slowly
	kindNew                // signed up shortly before the first exposure, no earlier orders
)

// role marks customers that carry a planted boundary case.
type role int

const (
	roleNone                role = iota
	roleActiveAtTrigger          // active customer with an extra order exactly at the trigger
	roleActiveBeforeTrigger      // active customer with an extra order one second before the trigger
	roleNewAtTrigger             // new customer whose first order is exactly at the trigger (ineligible)
	roleLapsedBeforeTrigger      // lapsed customer whose only look-back order is one second before the trigger (eligible)
)

// customer holds a customer's static attributes together with the latent
// facts the generator decided about it.
type customer struct {
	id        int64
	region    string
	signup    int64
	tenure    string
	exposed   bool
	variant   string // hashed assignment under the step in force at the trigger
	step      int    // index in schedule of the step that decided variant
	kind      kind
	trigger   int64 // first home exposure inside the window; zero when never triggered
	eligible  bool  // triggered and at least one non-cancelled order in [trigger-60d, trigger)
	crossover bool  // has an exposure row with the other variant
	dryRun    bool  // has a home exposure before the window and a later trigger inside it
	noHome    bool  // exposed but never on the home surface
	dryOnly   bool  // home exposures only before the window
	stray     bool  // has an exposure row after the window end
	searchPre bool  // has a search or checkout exposure before the trigger
	role      role
	// planted is the expected extra non-cancelled orders in [trigger,
	// trigger+14d) that the shelf would cause for this customer if treated
	// (zero when ineligible): the planted lift on the expected baseline
	// count, which includes the sale's extra orders.
	planted float64
}

type exposure struct {
	customerID int64
	variant    string
	at         int64
	surface    string
	platform   string
}

type order struct {
	id         int64
	customerID int64
	at         int64
	amount     float64
	cancelled  bool
}

type tap struct {
	customerID int64
	at         int64
	itemID     int64
}

type contact struct {
	customerID int64
	at         int64
	channel    string
}

// dataset is everything the generator writes.
type dataset struct {
	customers []customer
	exposures []exposure
	orders    []order
	taps      []tap
	contacts  []contact
	visits    []visit // pre-period screen visits (visits.go)
}

// splitmix64 scrambles x; it derives independent per-customer seeds.
func splitmix64(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

// assign sets the variant of a customer decided at instant at (and the step
// that decided it) by hashing its id: shelf when the hash modulo 100 is at least 100 minus the
// shelf percentage of the step in force. The thresholds nest, so a customer
// in shelf at 5% is in shelf at every wider step, and customers triggered in
// the 50/50 step keep the variant the hash gave them before there was a
// schedule.
func (c *customer) assign(at int64) {
	c.step = stepAt(at)
	c.variant = control
	if hashShelf(c.id, schedule[c.step].shelfPct) {
		c.variant = shelf
	}
}

// hashShelf reports whether customer id is in the shelf variant when pct
// percent of customers are.
func hashShelf(id int64, pct int) bool {
	h := fnv.New64a()
	h.Write([]byte("reorder-shelf:" + strconv.FormatInt(id, 10)))
	return h.Sum64()%100 >= uint64(100-pct)
}

// other returns the variant that is not v.
func other(v string) string {
	if v == control {
		return shelf
	}
	return control
}

// simulate builds the whole data set for n exposed customers plus n/40
// customers who never saw the flag.
func simulate(seed uint64, n int) *dataset {
	master := rand.New(rand.NewPCG(splitmix64(seed), splitmix64(^seed)))
	total := n + n/40
	seen := make(map[int64]bool, total)
	ids := make([]int64, 0, total)
	for len(ids) < total {
		id := 1_000_000 + master.Int64N(9_000_000)
		if !seen[id] {
			seen[id] = true
			ids = append(ids, id)
		}
	}
	ds := &dataset{}
	for i, id := range ids {
		s := splitmix64(seed ^ splitmix64(uint64(i)+1))
		src := rand.NewPCG(s, splitmix64(s))
		// The sale's extra orders come from a stream of their own, so the
		// other draws of a customer do not depend on them.
		ss := splitmix64(seed ^ 0x73616c6500000000 ^ splitmix64(uint64(i)+1))
		rs := rand.New(rand.NewPCG(ss, splitmix64(ss)))
		simulateCustomer(ds, src, rs, id, i < n)
	}
	assignOrderIDs(ds.orders)
	simulateVisits(ds, seed)
	return ds
}

// pick returns one of items drawn with the given weights (which sum to 1).
func pick(r *rand.Rand, items []string, weights []float64) string {
	u := r.Float64()
	for i, w := range weights {
		if u < w {
			return items[i]
		}
		u -= w
	}
	return items[len(items)-1]
}

// between returns a uniform integer time in [from, to).
func between(r *rand.Rand, from, to int64) int64 {
	if to <= from {
		return from
	}
	return from + r.Int64N(to-from)
}

// gamma draws from a gamma distribution with the given shape (at least 1)
// and unit scale, using the Marsaglia-Tsang method.
func gamma(r *rand.Rand, shape float64) float64 {
	d := shape - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		x := r.NormFloat64()
		v := 1 + c*x
		if v <= 0 {
			continue
		}
		v = v * v * v
		u := r.Float64()
		if u < 1-0.0331*x*x*x*x || math.Log(u) < 0.5*x*x+d*(1-v+math.Log(v)) {
			return d * v
		}
	}
}

// arrivals calls fn for each event of a Poisson process with ratePerDay
// events per day on [from, to), truncating times to whole seconds.
func arrivals(r *rand.Rand, from, to int64, ratePerDay float64, fn func(at int64)) {
	if ratePerDay <= 0 || to <= from {
		return
	}
	perSec := ratePerDay / float64(secPerDay)
	t := float64(from)
	for {
		t += r.ExpFloat64() / perSec
		if t >= float64(to) {
			return
		}
		fn(int64(t))
	}
}

// drawTrigger returns the instant of a first home exposure: about 97% fall
// in the first four weeks (front-loaded), the rest in the last two weeks of
// the window, where the 14-day outcome window cannot elapse.
func drawTrigger(r *rand.Rand) int64 {
	if r.Float64() < 0.03 {
		return between(r, matureCutoff, windowEnd)
	}
	const spanDays, meanDays = 28.0, 10.0
	u := r.Float64()
	x := -meanDays * math.Log(1-u*(1-math.Exp(-spanDays/meanDays)))
	at := windowStart + int64(x*float64(secPerDay))
	return min(at, matureCutoff-1)
}

var (
	regions        = []string{"north", "south", "east", "west"}
	regionWeights  = []float64{0.27, 0.23, 0.26, 0.24}
	platforms      = []string{"ios", "android", "web"}
	platformWeight = []float64{0.45, 0.40, 0.15}
	channels       = []string{"chat", "phone", "email"}
	channelWeights = []float64{0.60, 0.15, 0.25}
	otherSurfaces  = []string{"search", "checkout"}
	otherWeights   = []float64{0.65, 0.35}
	anySurfaces    = []string{"home", "search", "checkout"}
	anyWeights     = []float64{0.50, 0.30, 0.20}
)

// simulateCustomer draws one customer with all its rows and appends them to
// ds. The extra orders of the pantry sale are drawn from rs.
func simulateCustomer(ds *dataset, src *rand.PCG, rs *rand.Rand, id int64, exposed bool) {
	r := rand.New(src)
	c := customer{id: id, exposed: exposed}
	c.region = pick(r, regions, regionWeights)
	switch u := r.Float64(); {
	case u < 0.74:
		c.kind = kindActive
	case u < 0.88:
		c.kind = kindLapsed
	default:
		c.kind = kindNew
	}

	// Exposures. ref is the instant that separates "before" from "after" for
	// the outcome processes: the trigger when there is one, otherwise the
	// first exposure (or an arbitrary instant for never-exposed customers).
	var rows []exposure
	var ref int64
	if exposed {
		rows = c.drawExposures(r)
		ref = rows[0].at
		for _, e := range rows {
			ref = min(ref, e.at)
		}
		firstRow := ref
		if c.trigger != 0 {
			ref = c.trigger
		}
		c.signup = c.drawSignup(r, firstRow)
	} else {
		ref = between(r, windowStart, windowEnd)
		c.assign(ref) // never written: these customers have no exposure rows
		c.signup = c.drawSignup(r, ref)
	}
	c.tenure = tenureBand(c.signup)
	ds.exposures = append(ds.exposures, rows...)

	// Boundary cases, only for mature, single-variant triggered customers.
	if c.trigger != 0 && c.trigger < matureCutoff && !c.crossover {
		u := r.Float64()
		switch c.kind {
		case kindActive:
			if u < 0.001 {
				c.role = roleActiveAtTrigger
			} else if u < 0.002 {
				c.role = roleActiveBeforeTrigger
			}
		case kindNew:
			if u < 0.01 {
				c.role = roleNewAtTrigger
			}
		case kindLapsed:
			if u < 0.01 {
				c.role = roleLapsedBeforeTrigger
			}
		}
	}

	// Orders before ref follow the baseline process of the customer's kind.
	lambda := gamma(r, orderRateShape) * orderRateMean / orderRateShape
	basket := 52 * math.Exp(0.35*r.NormFloat64()-0.35*0.35/2)
	var orders []order
	addFrom := func(r *rand.Rand, at int64, factor float64, forceDelivered bool) {
		amount := basket * math.Exp(0.30*r.NormFloat64()-0.30*0.30/2) * factor
		amount = math.Max(3, math.Round(amount*100)/100)
		cancelled := r.Float64() < cancelProb && !forceDelivered
		orders = append(orders, order{customerID: id, at: at, amount: amount, cancelled: cancelled})
	}
	add := func(at int64, factor float64, forceDelivered bool) { addFrom(r, at, factor, forceDelivered) }
	// sale adds the pantry sale's extra orders to a stretch [from, to) of
	// the customer's order process with the given rate: a Poisson process
	// of rate (saleBoost-1)·rate on the part inside the sale.
	sale := func(from, to int64, rate, factor float64) {
		arrivals(rs, max(from, saleStart), min(to, saleEnd), (saleBoost-1)*rate, func(at int64) { addFrom(rs, at, factor, false) })
	}
	preFrom := max(dataStart, c.signup)
	preTo := int64(0) // end of the baseline process before ref
	switch c.kind {
	case kindActive:
		preTo = ref
		arrivals(r, preFrom, preTo, lambda, func(at int64) { add(at, 1, false) })
	case kindLapsed:
		preTo = ref - lookback - r.Int64N(45*secPerDay)
		arrivals(r, preFrom, preTo, lambda, func(at int64) { add(at, 1, false) })
	}
	if c.role == roleActiveBeforeTrigger || c.role == roleLapsedBeforeTrigger {
		add(ref-1, 1, true)
	}
	// Eligibility uses the half-open look-back [trigger-60d, trigger).
	eligible := func() bool {
		for _, o := range orders {
			if c.trigger != 0 && !o.cancelled && o.at >= c.trigger-lookback && o.at < c.trigger {
				return true
			}
		}
		return false
	}
	// hashTreated is whether the customer would be treated under a plain
	// 50/50 hash and without the sale (see the support contacts below).
	hashTreated := eligible() && hashShelf(id, 50)
	if c.kind != kindNew {
		sale(preFrom, preTo, lambda, 1)
	}
	c.eligible = eligible()
	treated := c.eligible && c.variant == shelf

	// after draws everything that depends on treatment: orders from ref
	// onwards, which carry the planted effect for treated customers, and
	// shelf taps. With emit false it only advances r.
	after := func(treated, emit bool) {
		postRate := lambda
		switch c.kind {
		case kindLapsed:
			postRate = 0.3 * lambda
		case kindNew:
			postRate = 0.8 * gamma(r, orderRateShape) * orderRateMean / orderRateShape
		}
		if emit && c.eligible {
			in := float64(horizon) + (saleBoost-1)*float64(max(0, min(c.trigger+horizon, saleEnd)-max(c.trigger, saleStart)))
			c.planted = (orderLift - 1) * (1 - cancelProb) * postRate * in / float64(secPerDay)
		}
		factor := 1.0
		if treated {
			postRate *= orderLift
			factor = basketFactor
		}
		n := len(orders)
		if c.role == roleActiveAtTrigger || c.role == roleNewAtTrigger {
			add(ref, factor, true)
		}
		arrivals(r, ref, windowEnd, postRate, func(at int64) { add(at, factor, false) })
		if emit {
			sale(ref, windowEnd, postRate, factor)
		} else {
			orders = orders[:n]
		}
		// Shelf taps: only eligible treated customers, after their trigger.
		if treated {
			items := make([]int64, 4+r.IntN(9))
			for i := range items {
				items[i] = 700_000 + r.Int64N(3000)
			}
			arrivals(r, c.trigger, windowEnd, tapsPer14/14, func(at int64) {
				t := tap{customerID: id, at: at, itemID: items[r.IntN(len(items))]}
				if emit {
					ds.taps = append(ds.taps, t)
				}
			})
		}
	}
	// Support contacts, drawn next from r, do not depend on the variant.
	// To keep them (and support.parquet) the same as under a plain 50/50
	// hash without the sale, a customer whose treatment differs from that
	// assignment has the draws after the trigger replayed for it, from the
	// same state of r, before the contacts are drawn.
	state := *src
	after(treated, true)
	if treated != hashTreated {
		*src = state
		after(hashTreated, false)
	}
	ds.orders = append(ds.orders, orders...)

	// Support contacts: same rate for everyone, before and after the trigger.
	arrivals(r, max(dataStart, c.signup), windowEnd, supportPer14/14, func(at int64) {
		ds.contacts = append(ds.contacts, contact{customerID: id, at: at, channel: pick(r, channels, channelWeights)})
	})

	ds.customers = append(ds.customers, c)
}

// drawSignup returns the signup instant, which always precedes first.
func (c *customer) drawSignup(r *rand.Rand, first int64) int64 {
	switch c.kind {
	case kindNew:
		return first - 600 - r.Int64N(14*secPerDay)
	case kindLapsed:
		return between(r, signupFloor, unixDate(2025, time.June, 1))
	default:
		return between(r, signupFloor, unixDate(2025, time.December, 31))
	}
}

// tenureBand classifies a signup instant relative to the window start.
func tenureBand(signup int64) string {
	switch {
	case signup > windowStart-365*secPerDay:
		return "new"
	case signup > windowStart-730*secPerDay:
		return "1y"
	default:
		return "2y+"
	}
}

// drawExposures returns between 1 and maxExposures flag evaluations for c
// and records the trigger and the planted exposure quirks on c.
func (c *customer) drawExposures(r *rand.Rand) []exposure {
	primary := pick(r, platforms, platformWeight)
	row := func(at int64, surface, variant string) exposure {
		p := primary
		if r.Float64() < 0.10 {
			p = pick(r, platforms, platformWeight)
		}
		return exposure{customerID: c.id, variant: variant, at: at, surface: surface, platform: p}
	}
	var rows []exposure
	switch u := r.Float64(); {
	case u < 0.07: // never reaches the home screen
		c.noHome = true
		at := drawTrigger(r)
		c.assign(at)
		for k := 1 + r.IntN(3); k > 0 && at < windowEnd; k-- {
			rows = append(rows, row(at, pick(r, otherSurfaces, otherWeights), c.variant))
			at += 60 + r.Int64N(5*secPerDay)
		}
	case u < 0.073: // only seen during the pre-launch dry run
		c.dryOnly = true
		c.assign(windowStart) // the dry run used the test step's weights
		for k := 1 + r.IntN(2); k > 0; k-- {
			rows = append(rows, row(between(r, dryRunStart, windowStart), "home", c.variant))
		}
	default:
		t := drawTrigger(r)
		c.trigger = t
		c.assign(t)
		c.crossover = r.Float64() < 0.005 && windowEnd-t > 3600
		c.dryRun = r.Float64() < 0.012
		c.stray = r.Float64() < 0.02
		if c.dryRun {
			rows = append(rows, row(between(r, dryRunStart, windowStart), "home", c.variant))
		}
		if r.Float64() < 0.45 {
			c.searchPre = true
			npre := 1
			if r.Float64() < 0.3 {
				npre = 2
			}
			for range npre {
				rows = append(rows, row(t-30-r.Int64N(72*3600), pick(r, otherSurfaces, otherWeights), c.variant))
			}
		}
		rows = append(rows, row(t, "home", c.variant))
		room := maxExposures - len(rows)
		if c.crossover {
			room--
		}
		if c.stray {
			room--
		}
		span := min(windowEnd-t-61, 21*secPerDay)
		for ; room > 0 && span > 0 && r.Float64() < 0.45; room-- {
			rows = append(rows, row(t+60+r.Int64N(span), pick(r, anySurfaces, anyWeights), c.variant))
		}
		if c.crossover {
			rows = append(rows, row(t+1+r.Int64N(windowEnd-t-1), pick(r, anySurfaces, anyWeights), other(c.variant)))
		}
		if c.stray {
			rows = append(rows, row(between(r, windowEnd, windowEnd+7*secPerDay), pick(r, anySurfaces, anyWeights), c.variant))
		}
	}
	return rows
}

// assignOrderIDs numbers orders in chronological order.
func assignOrderIDs(orders []order) {
	sortOrders(orders)
	for i := range orders {
		orders[i].id = 50_000_001 + int64(i)
	}
}

// sortOrders sorts orders by time, then by every other field, so that the
// order is fully determined.
func sortOrders(orders []order) {
	slices.SortFunc(orders, func(a, b order) int {
		if c := cmp.Compare(a.at, b.at); c != 0 {
			return c
		}
		if c := cmp.Compare(a.customerID, b.customerID); c != 0 {
			return c
		}
		if c := cmp.Compare(a.amount, b.amount); c != 0 {
			return c
		}
		return cmp.Compare(b2i(a.cancelled), b2i(b.cancelled))
	})
}

// b2i converts a boolean to 0 or 1.
func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}
