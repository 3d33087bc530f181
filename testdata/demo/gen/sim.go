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
)

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
	variant   string // hashed assignment
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

// assign returns the variant of a customer by hashing its id, 50/50.
func assign(id int64) string {
	h := fnv.New64a()
	h.Write([]byte("reorder-shelf:" + strconv.FormatInt(id, 10)))
	if h.Sum64()%100 < 50 {
		return control
	}
	return shelf
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
		r := rand.New(rand.NewPCG(s, splitmix64(s)))
		simulateCustomer(ds, r, id, i < n)
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

// simulateCustomer draws one customer with all its rows and appends them to ds.
func simulateCustomer(ds *dataset, r *rand.Rand, id int64, exposed bool) {
	c := customer{id: id, exposed: exposed, variant: assign(id)}
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
	add := func(at int64, factor float64, forceDelivered bool) {
		amount := basket * math.Exp(0.30*r.NormFloat64()-0.30*0.30/2) * factor
		amount = math.Max(3, math.Round(amount*100)/100)
		cancelled := r.Float64() < cancelProb && !forceDelivered
		orders = append(orders, order{customerID: id, at: at, amount: amount, cancelled: cancelled})
	}
	preFrom := max(dataStart, c.signup)
	switch c.kind {
	case kindActive:
		arrivals(r, preFrom, ref, lambda, func(at int64) { add(at, 1, false) })
	case kindLapsed:
		lapse := ref - lookback - r.Int64N(45*secPerDay)
		arrivals(r, preFrom, lapse, lambda, func(at int64) { add(at, 1, false) })
	}
	if c.role == roleActiveBeforeTrigger || c.role == roleLapsedBeforeTrigger {
		add(ref-1, 1, true)
	}

	// Eligibility uses the half-open look-back [trigger-60d, trigger).
	if c.trigger != 0 {
		for _, o := range orders {
			if !o.cancelled && o.at >= c.trigger-lookback && o.at < c.trigger {
				c.eligible = true
				break
			}
		}
	}
	treated := c.eligible && c.variant == shelf

	// Orders from ref onwards carry the planted effect for treated customers.
	postRate := lambda
	switch c.kind {
	case kindLapsed:
		postRate = 0.3 * lambda
	case kindNew:
		postRate = 0.8 * gamma(r, orderRateShape) * orderRateMean / orderRateShape
	}
	factor := 1.0
	if treated {
		postRate *= orderLift
		factor = basketFactor
	}
	if c.role == roleActiveAtTrigger || c.role == roleNewAtTrigger {
		add(ref, factor, true)
	}
	arrivals(r, ref, windowEnd, postRate, func(at int64) { add(at, factor, false) })
	ds.orders = append(ds.orders, orders...)

	// Shelf taps: only eligible treated customers, after their trigger.
	if treated {
		items := make([]int64, 4+r.IntN(9))
		for i := range items {
			items[i] = 700_000 + r.Int64N(3000)
		}
		arrivals(r, c.trigger, windowEnd, tapsPer14/14, func(at int64) {
			ds.taps = append(ds.taps, tap{customerID: id, at: at, itemID: items[r.IntN(len(items))]})
		})
	}

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
		for k := 1 + r.IntN(3); k > 0 && at < windowEnd; k-- {
			rows = append(rows, row(at, pick(r, otherSurfaces, otherWeights), c.variant))
			at += 60 + r.Int64N(5*secPerDay)
		}
	case u < 0.073: // only seen during the pre-launch dry run
		c.dryOnly = true
		for k := 1 + r.IntN(2); k > 0; k-- {
			rows = append(rows, row(between(r, dryRunStart, windowStart), "home", c.variant))
		}
	default:
		t := drawTrigger(r)
		c.trigger = t
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
