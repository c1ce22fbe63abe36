package sampler

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distmv"

	"dipline/steps/internal/rng"
)

// The guide's log density differs from the multivariate t's of gonum's distmv.StudentsT (an
// independent implementation) by one constant, its normalisation, at points near and far.
func TestGuideDensityMatchesTheMultivariateT(t *testing.T) {
	g := kms([]float64{1, -2, 0.5}, []float64{1, 2, 0.5}, 0.6)
	gd, err := NewGuide(g.mu, g.cov, 4)
	if err != nil {
		t.Fatal(err)
	}
	ref, ok := distmv.NewStudentsT(g.mu, g.cov, 4, nil)
	if !ok {
		t.Fatal("distmv.NewStudentsT refused the scale matrix")
	}
	d := make([]float64, 3)
	var c0 float64
	for i, x := range [][]float64{{1, -2, 0.5}, {2, -1, 0.7}, {-3, 4, 0}, {10, -20, 5}} {
		c := ref.LogProb(x) - gd.logDensity(x, d)
		if i == 0 {
			c0 = c
			continue
		}
		if math.Abs(c-c0) > 1e-12 {
			t.Errorf("at %v the log densities differ by %.15g, at the centre by %.15g", x, c, c0)
		}
	}
}

// Draws from a guide have the mean μ and covariance Σ·ν/(ν − 2) of the multivariate t
// (Kotz & Nadarajah 2004, Multivariate t Distributions and Their Applications, §1.1; from
// memory), within five standard errors; ν = 10 keeps the fourth moments finite, so the
// sample covariance's error is of the usual order.
func TestGuideDrawsHaveTheMultivariateTMoments(t *testing.T) {
	g := kms([]float64{1, -2, 0.5}, []float64{1, 2, 0.5}, 0.6)
	gd, err := NewGuide(g.mu, g.cov, 10)
	if err != nil {
		t.Fatal(err)
	}
	const n = 200000
	r := rng.New(3)
	cols := mat.NewDense(n, 3, nil)
	y := make([]float64, 3)
	for i := 0; i < n; i++ {
		gd.draw(y, r)
		cols.SetRow(i, y)
	}
	var cov mat.SymDense
	stat.CovarianceMatrix(&cov, cols, nil)
	f := 10.0 / 8
	for i := 0; i < 3; i++ {
		m := stat.Mean(mat.Col(nil, i, cols), nil)
		se := math.Sqrt(f * g.cov.At(i, i) / n)
		if math.Abs(m-g.mu[i]) > 5*se {
			t.Errorf("mean[%d] = %.4f, want %.4f ± %.4f", i, m, g.mu[i], 5*se)
		}
		for j := 0; j < 3; j++ {
			want := f * g.cov.At(i, j)
			// Normal-theory SE doubled for the t's excess kurtosis 6/(ν − 4) = 1.
			se := 2 * math.Sqrt((f*g.cov.At(i, i)*f*g.cov.At(j, j)+want*want)/n)
			if math.Abs(cov.At(i, j)-want) > 5*se {
				t.Errorf("cov[%d][%d] = %.4f, want %.4f ± %.4f", i, j, cov.At(i, j), want, 5*se)
			}
		}
	}
}

// FitGuide's mean and scale matrix are the pooled sample mean and covariance of the chains
// (checked against gonum's stat.CovarianceMatrix), times the inflation squared.
func TestFitGuideIsTheSampleMeanAndCovariance(t *testing.T) {
	g := kms([]float64{0, 1, 2, 3}, []float64{1, 1, 2, 2}, 0.5)
	var chains []*Chain
	for seed := range uint64(2) {
		ch, err := Run(context.Background(), g.logp, ball(8, g.mu, 0.5, seed), Options{Steps: 200, Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		chains = append(chains, ch)
	}
	const from = 50
	gd, err := FitGuide(chains, from, 1.5)
	if err != nil {
		t.Fatal(err)
	}
	rows := mat.NewDense(2*(200-from)*8, 4, nil)
	r := 0
	for _, ch := range chains {
		for s := from; s < ch.Stored; s++ {
			for w := 0; w < ch.Walkers; w++ {
				rows.SetRow(r, ch.At(s, w))
				r++
			}
		}
	}
	var cov mat.SymDense
	stat.CovarianceMatrix(&cov, rows, nil)
	l := mat.NewDense(4, 4, gd.Chol)
	var got mat.Dense
	got.Mul(l, l.T())
	for i := 0; i < 4; i++ {
		if m := stat.Mean(mat.Col(nil, i, rows), nil); math.Abs(gd.Mean[i]-m) > 1e-12*(1+math.Abs(m)) {
			t.Errorf("mean[%d] = %v, want %v", i, gd.Mean[i], m)
		}
		for j := 0; j < 4; j++ {
			want := 2.25 * cov.At(i, j)
			if math.Abs(got.At(i, j)-want) > 1e-10*math.Abs(want)+1e-14 {
				t.Errorf("scale[%d][%d] = %v, want %v", i, j, got.At(i, j), want)
			}
		}
	}
	if _, err := FitGuide(chains, 200, 1); err == nil {
		t.Error("FitGuide fitted a guide to no samples")
	}
}

// With a guide that matches the target, the independence move alone draws nearly
// independent states: τ on a correlated 10-D Gaussian is a few steps, where the stretch move
// alone needs tens (measured in the same run).
func TestAGoodGuideShortensTheAutocorrelationTime(t *testing.T) {
	mu := make([]float64, 10)
	s := make([]float64, 10)
	for i := range s {
		s[i] = 1 + float64(i)
	}
	g := kms(mu, s, 0.8)
	gd, err := NewGuide(g.mu, g.cov, GuideNu)
	if err != nil {
		t.Fatal(err)
	}
	tauOf := func(o Options) float64 {
		ch, err := Run(context.Background(), g.logp, ball(20, mu, 1, 1), o)
		if err != nil {
			t.Fatal(err)
		}
		tau := 0.0
		for p := 0; p < 10; p++ {
			ac, err := AutoCorrTime(ch.Series(p, 500), 0)
			if err != nil {
				t.Fatal(err)
			}
			tau = math.Max(tau, ac.Tau)
		}
		return tau
	}
	stretch := tauOf(Options{Steps: 4000, Seed: 1})
	guided := tauOf(Options{Steps: 4000, Seed: 1, GuideShare: 1, Guide: gd})
	t.Logf("τ: stretch %.1f, guide %.1f steps", stretch, guided)
	if !(guided < 5) || !(stretch > 4*guided) {
		t.Errorf("τ with the guide %.1f steps, stretch alone %.1f: want under 5 and a quarter of the stretch move's", guided, stretch)
	}
}
