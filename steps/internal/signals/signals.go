// Package signals is the shared description of a periodic transit-like signal, as a search
// step finds it and as detrend (to mask transits) and later steps (fit, vet, ephemeris) take
// it. It holds data only.
package signals

import "math"

// Signal is one periodic dip. Times are in days on the light curve's time scale and
// reference epoch.
type Signal struct {
	Period   float64 // days
	Epoch    float64 // a mid-transit time, days since the light curve's reference epoch
	Duration float64 // first to last contact, days
	Depth    float64 // fractional, positive for a dip
	DepthErr float64 // one sigma
	SNR      float64 // as defined by the search's results schema
	SDE      float64 // signal detection efficiency of the periodogram peak
	Transits int     // transits with data
}

// InTransit reports whether time t lies within factor × duration/2 of a mid-transit.
func (s Signal) InTransit(t, factor float64) bool {
	if s.Period <= 0 {
		return false
	}
	ph := math.Mod(t-s.Epoch, s.Period)
	if ph < 0 {
		ph += s.Period
	}
	if ph > s.Period/2 {
		ph -= s.Period
	}
	return math.Abs(ph) <= factor*s.Duration/2
}

// Source is implemented by artifacts that carry signals (a search's result).
type Source interface {
	Signals() []Signal
}
