package main

import "math/rand/v2"

// The pre-period of the plan. Before launch there are no exposures of the
// experiment; the app's own screen-visit log marks when a customer would
// have been exposed (a home-screen visit). The generator writes visits for
// four whole weeks before the dry run, from a random stream of its own per
// customer, so the other files are the same as without it.
var (
	preStart = unixDate(2026, 1, 19) // Monday
	preEnd   = unixDate(2026, 2, 16) // Monday, four weeks later
)

// Visit rates per day by kind of customer, and the share of visits that
// land on the home screen (the rest are search or account screens).
const (
	visitRateActive = 0.30
	visitRateLapsed = 0.04
	visitRateNew    = 0.20
	homeShare       = 0.7
)

type visit struct {
	customerID int64
	at         int64
	screen     string
}

// simulateVisits draws each customer's screen visits in [preStart, preEnd).
// A new customer visits only after signing up.
func simulateVisits(ds *dataset, seed uint64) {
	for i, c := range ds.customers {
		s := splitmix64(seed ^ 0x7669736974730000 ^ splitmix64(uint64(i)+1))
		r := rand.New(rand.NewPCG(s, splitmix64(s)))
		rate := visitRateActive
		switch c.kind {
		case kindLapsed:
			rate = visitRateLapsed
		case kindNew:
			rate = visitRateNew
		}
		from := max(preStart, c.signup)
		if from >= preEnd {
			continue
		}
		arrivals(r, from, preEnd, rate, func(at int64) {
			screen := "home"
			if r.Float64() >= homeShare {
				screen = pick(r, []string{"search", "account"}, []float64{0.7, 0.3})
			}
			ds.visits = append(ds.visits, visit{customerID: c.id, at: at, screen: screen})
		})
	}
}
