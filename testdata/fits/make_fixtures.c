/*
 * make_fixtures writes the FITS fixtures of dipline's FITS reader and photometry step with
 * cfitsio, a library independent of the Go reader under test. All data are invented: a
 * synthetic star with integer-derived noise and a box-shaped dip, and a table of columns
 * whose values follow the simple formulas below. The Go tests recompute every value from
 * the same formulas (see steps/internal/fits/fixture_test.go and steps/photometry), so the
 * two must change together.
 *
 * Usage: make_fixtures DIR   (writes DIR/lightcurve.fits, DIR/lightcurve_late.fits,
 *                             DIR/utc.fits and DIR/tables.fits)
 *
 * Compile with -ffp-contract=off so that no multiply-add is fused: the Go side computes the
 * same expressions with one rounding per operation.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "fitsio.h"

static int status;

static void check(const char *what)
{
	if (status) {
		fprintf(stderr, "make_fixtures: %s: ", what);
		fits_report_error(stderr, status);
		exit(1);
	}
}

/*
 * noise returns the k-th draw of the fixtures' noise: the sum of four 24-bit integers from a
 * 64-bit linear congruential generator (multiplier 6364136223846793005, increment
 * 1442695040888963407; constants from memory), centred, times 1e-10. The sum is an exact
 * integer, so the only rounding is the final product. Its standard deviation is about
 * 9.7e-4 (four uniform draws, 2^24/sqrt(12) each).
 */
static uint64_t lcg;

static double noise(void)
{
	int64_t k = 0;
	for (int j = 0; j < 4; j++) {
		lcg = lcg * 6364136223846793005ULL + 1442695040888963407ULL;
		k += (int64_t)(lcg >> 40);
	}
	k -= (int64_t)1 << 25; /* 4 × 2^23, the mean of the sum */
	return (double)k * 1e-10;
}

/* in_dip: the box dip lasts 17 cadences of 10 min every 461 cadences, from cadence 120. */
static int in_dip(long i) { return i >= 120 && (i - 120) % 461 < 17; }

static void time_keys(fitsfile *f, const char *sys, const char *ref, const char *unit,
		      long refi, double reff)
{
	fits_update_key(f, TSTRING, "TIMESYS", (void *)sys, "time scale", &status);
	fits_update_key(f, TSTRING, "TIMEREF", (void *)ref, "where the times are referred to", &status);
	fits_update_key(f, TSTRING, "TIMEUNIT", (void *)unit, "unit of TIME and of time keywords", &status);
	fits_update_key(f, TLONG, "BJDREFI", &refi, "integer part of the reference JD", &status);
	fits_update_key(f, TDOUBLE, "BJDREFF", &reff, "fraction of the reference JD", &status);
	double pixr = 0.5;
	fits_update_key(f, TDOUBLE, "TIMEPIXR", &pixr, "time stamps are mid-exposure", &status);
	check("time keywords");
}

static void primary(fitsfile *f, const char *object)
{
	fits_create_img(f, BYTE_IMG, 0, NULL, &status);
	fits_update_key(f, TSTRING, "OBJECT", (void *)object, "invented star", &status);
	fits_update_key(f, TSTRING, "ORIGIN", "dipline test fixtures", "synthetic data", &status);
	fits_write_comment(f, "Invented data for tests; no real star or instrument.", &status);
	check("primary HDU");
}

/*
 * lightcurve.fits: 2000 points at a 10-min cadence, BJD_TDB, reference JD 2460000.25,
 * times in days. Row i (0-based):
 *   TIME     = 0.5 + i × (10/1440)                                   [d]
 *   FLUX     = (float)(1000 × ((1 + noise_i) − dip_i)), dip_i = 0.01 in the dip, else 0
 *              NaN when i % 331 == 200
 *   FLUX_ERR = 0.97, but 0 when i % 503 == 300
 *   QUALITY  = (i % 97 == 13 ? 4 : 0) | (i % 250 == 7 ? 1 : 0)
 * with noise_i the i-th draw from noise() seeded with lcg = 42.
 * EXPOSURE = 480 s (comment unit "[s]"), TIMEDEL = 10/1440 d.
 */
static void lightcurve(const char *dir)
{
	char path[4096];
	snprintf(path, sizeof path, "!%s/lightcurve.fits", dir);
	fitsfile *f;
	fits_create_file(&f, path, &status);
	check(path);
	primary(f, "DPL-0007");

	char *ttype[] = {"TIME", "FLUX", "FLUX_ERR", "QUALITY"};
	char *tform[] = {"1D", "1E", "1E", "1J"};
	char *tunit[] = {"d", "e-/s", "e-/s", ""};
	enum { n = 2000 };
	fits_create_tbl(f, BINARY_TBL, n, 4, ttype, tform, tunit, "LIGHTCURVE", &status);
	check("LIGHTCURVE table");
	time_keys(f, "TDB", "SOLARSYSTEM", "d", 2460000, 0.25);
	double exposure = 480, timedel = 10.0 / 1440.0;
	fits_update_key(f, TDOUBLE, "EXPOSURE", &exposure, "[s] integration time of one point", &status);
	fits_update_key(f, TDOUBLE, "TIMEDEL", &timedel, "time between points", &status);
	fits_update_key(f, TSTRING, "INSTRUME", "DEMO-CAM", "invented instrument", &status);
	fits_update_key(f, TSTRING, "FILTER", "demo-red", "invented band", &status);
	check("light-curve keywords");

	static double t[n];
	static float flux[n], err[n];
	static int q[n];
	lcg = 42;
	for (long i = 0; i < n; i++) {
		t[i] = 0.5 + (double)i * (10.0 / 1440.0);
		double dip = in_dip(i) ? 0.01 : 0;
		double nz = noise();
		flux[i] = (float)(1000.0 * ((1.0 + nz) - dip));
		if (i % 331 == 200)
			flux[i] = NAN;
		err[i] = (i % 503 == 300) ? 0.0f : 0.97f;
		q[i] = (i % 97 == 13 ? 4 : 0) | (i % 250 == 7 ? 1 : 0);
	}
	fits_write_col(f, TDOUBLE, 1, 1, 1, n, t, &status);
	fits_write_col(f, TFLOAT, 2, 1, 1, n, flux, &status);
	fits_write_col(f, TFLOAT, 3, 1, 1, n, err, &status);
	fits_write_col(f, TINT, 4, 1, 1, n, q, &status);
	check("light-curve columns");
	fits_close_file(f, &status);
	check("close lightcurve.fits");
}

/*
 * lightcurve_late.fits: a later segment of the same invented star, 1500 points at a 2-min
 * cadence, BJD_TDB, reference JD 2460020.625, times in seconds, no error or quality column
 * and lower-case column names. Row i:
 *   time = 1800 + 120 × i                                             [s]
 *   flux = (float)(52.5 × (1 + noise_i))
 * with noise_i the i-th draw from noise() seeded with lcg = 7. TIMEDEL = 120 s, no EXPOSURE.
 */
static void lightcurve_late(const char *dir)
{
	char path[4096];
	snprintf(path, sizeof path, "!%s/lightcurve_late.fits", dir);
	fitsfile *f;
	fits_create_file(&f, path, &status);
	check(path);
	primary(f, "DPL-0007");

	char *ttype[] = {"time", "flux"};
	char *tform[] = {"1D", "1E"};
	char *tunit[] = {"s", "e-/s"};
	enum { n = 1500 };
	fits_create_tbl(f, BINARY_TBL, n, 2, ttype, tform, tunit, "LightCurve", &status);
	check("late table");
	time_keys(f, "TDB", "SOLARSYSTEM", "s", 2460020, 0.625);
	double timedel = 120;
	fits_update_key(f, TDOUBLE, "TIMEDEL", &timedel, "time between points", &status);
	check("late keywords");

	static double t[n];
	static float flux[n];
	lcg = 7;
	for (long i = 0; i < n; i++) {
		t[i] = 1800.0 + 120.0 * (double)i;
		flux[i] = (float)(52.5 * (1.0 + noise()));
	}
	fits_write_col(f, TDOUBLE, 1, 1, 1, n, t, &status);
	fits_write_col(f, TFLOAT, 2, 1, 1, n, flux, &status);
	check("late columns");
	fits_close_file(f, &status);
	check("close lightcurve_late.fits");
}

/*
 * utc.fits: 40 points whose header says TIMESYS = 'UTC', TIMEREF = 'TOPOCENTER', which is
 * not BJD_TDB. Row i: TIME = 0.1 × i [d], FLUX = 1 + 0.001 × (i % 3), FLUX_ERR = 0.001.
 */
static void utc(const char *dir)
{
	char path[4096];
	snprintf(path, sizeof path, "!%s/utc.fits", dir);
	fitsfile *f;
	fits_create_file(&f, path, &status);
	check(path);
	primary(f, "DPL-0008");
	char *ttype[] = {"TIME", "FLUX", "FLUX_ERR"};
	char *tform[] = {"1D", "1D", "1D"};
	char *tunit[] = {"d", "", ""};
	enum { n = 40 };
	fits_create_tbl(f, BINARY_TBL, n, 3, ttype, tform, tunit, "LIGHTCURVE", &status);
	time_keys(f, "UTC", "TOPOCENTER", "d", 2460000, 0.5);
	double t[n], fl[n], e[n];
	for (int i = 0; i < n; i++) {
		t[i] = 0.1 * i;
		fl[i] = 1 + 0.001 * (i % 3);
		e[i] = 0.001;
	}
	fits_write_col(f, TDOUBLE, 1, 1, 1, n, t, &status);
	fits_write_col(f, TDOUBLE, 2, 1, 1, n, fl, &status);
	fits_write_col(f, TDOUBLE, 3, 1, 1, n, e, &status);
	check("utc columns");
	fits_close_file(f, &status);
	check("close utc.fits");
}

/*
 * tables.fits exercises the format: a primary image (30 × 20, 16-bit, value x + 2y) to be
 * skipped, extension 1 'MIXED' (a binary table with a heap), extension 2 'IMG' (an image
 * extension, 7 × 5, 32-bit, value 1000 + x − y) and extension 3 'Second_LC' (a small binary
 * table after them). MIXED has 25 rows; row i (0-based):
 *   TIME   1D   0.125 × i                                  [d]
 *   RAW    1J   raw 7i − 50, TSCAL2 = 0.5, TZERO2 = 100   → 0.5 (7i − 50) + 100
 *   COUNTS 1I   3i, but −999 (= TNULL3) when i % 5 == 3
 *   VEC    3E   i + 0.25 k for k = 0, 1, 2
 *   LABEL  8A   "row<i>", and "it's" in row 0
 *   GOOD   1L   i % 3 != 0, undefined (null) in row 4
 *   SPEC   1PE  i % 4 + 1 values, element j = i + 0.5 j (in the heap; cfitsio
 *               rewrites TFORM7 to 1PE(4), the longest array written)
 *   BYTE   1B   (10 i) % 256
 *   BIG    1K   i × 10^12
 *   USHORT 1U   40000 + i   (cfitsio writes I with TZERO = 32768)
 *   PAIR   2D   −i, i²
 * Second_LC has 10 rows: TIME 1D = 100 + i / 48, FLUX 1E = 1 + i / 1000 (as float).
 * Keywords of MIXED: OBSERVER = 'O''Neil' (a quote inside a string), TESTD = 1.5D+03
 * (a D exponent), TESTL = T, TESTI = -42, TESTF = 0.1.
 */
static void tables(const char *dir)
{
	char path[4096];
	snprintf(path, sizeof path, "!%s/tables.fits", dir);
	fitsfile *f;
	fits_create_file(&f, path, &status);
	check(path);

	long naxes[2] = {30, 20};
	fits_create_img(f, SHORT_IMG, 2, naxes, &status);
	short img[20][30];
	for (int y = 0; y < 20; y++)
		for (int x = 0; x < 30; x++)
			img[y][x] = (short)(x + 2 * y);
	fits_write_img(f, TSHORT, 1, 600, img, &status);
	fits_update_key(f, TSTRING, "ORIGIN", "dipline test fixtures", "synthetic data", &status);
	check("primary image");

	char *ttype[] = {"TIME", "RAW", "COUNTS", "VEC", "LABEL", "GOOD", "SPEC", "BYTE", "BIG", "USHORT", "PAIR"};
	char *tform[] = {"1D", "1J", "1I", "3E", "8A", "1L", "1PE(6)", "1B", "1K", "1U", "2D"};
	char *tunit[] = {"d", "adu", "", "", "", "", "", "", "", "", ""};
	enum { n = 25 };
	fits_create_tbl(f, BINARY_TBL, n, 11, ttype, tform, tunit, "MIXED", &status);
	check("MIXED table");
	fits_update_key(f, TSTRING, "OBSERVER", "O'Neil", "a quote inside a string", &status);
	fits_write_record(f, "TESTD   =              1.5D+03 / a D exponent", &status);
	int yes = 1;
	fits_update_key(f, TLOGICAL, "TESTL", &yes, "a logical", &status);
	long minus42 = -42;
	fits_update_key(f, TLONG, "TESTI", &minus42, "an integer", &status);
	double tenth = 0.1;
	fits_update_key(f, TDOUBLE, "TESTF", &tenth, "a float", &status);
	check("MIXED keywords");

	for (long i = 0; i < n; i++) {
		long row = i + 1;
		double t = 0.125 * (double)i;
		int raw = 7 * (int)i - 50;
		short counts = (i % 5 == 3) ? -999 : (short)(3 * i);
		float vec[3] = {(float)i, (float)i + 0.25f, (float)i + 0.5f};
		char label[16];
		if (i == 0)
			strcpy(label, "it's");
		else
			snprintf(label, sizeof label, "row%ld", i);
		char *lp = label;
		char good = (i % 3 != 0);
		float spec[6];
		int nspec = (int)(i % 4) + 1;
		for (int j = 0; j < nspec; j++)
			spec[j] = (float)i + 0.5f * (float)j;
		unsigned char byte = (unsigned char)((10 * i) % 256);
		LONGLONG big = (LONGLONG)i * 1000000000000LL;
		unsigned short us = (unsigned short)(40000 + i);
		double pair[2] = {-(double)i, (double)(i * i)};

		fits_write_col(f, TDOUBLE, 1, row, 1, 1, &t, &status);
		fits_write_col(f, TINT, 2, row, 1, 1, &raw, &status);
		fits_write_col(f, TSHORT, 3, row, 1, 1, &counts, &status);
		fits_write_col(f, TFLOAT, 4, row, 1, 3, vec, &status);
		fits_write_col(f, TSTRING, 5, row, 1, 1, &lp, &status);
		if (i == 4)
			fits_write_col_null(f, 6, row, 1, 1, &status);
		else
			fits_write_col(f, TLOGICAL, 6, row, 1, 1, &good, &status);
		fits_write_col(f, TFLOAT, 7, row, 1, nspec, spec, &status);
		fits_write_col(f, TBYTE, 8, row, 1, 1, &byte, &status);
		fits_write_col(f, TLONGLONG, 9, row, 1, 1, &big, &status);
		fits_write_col(f, TUSHORT, 10, row, 1, 1, &us, &status);
		fits_write_col(f, TDOUBLE, 11, row, 1, 2, pair, &status);
		check("MIXED row");
	}
	/* Scaling and null keywords last, so that the raw values above were written as is. */
	double scale = 0.5, zero = 100;
	fits_update_key(f, TDOUBLE, "TSCAL2", &scale, "physical = 0.5 raw + 100", &status);
	fits_update_key(f, TDOUBLE, "TZERO2", &zero, "", &status);
	long tnull = -999;
	fits_update_key(f, TLONG, "TNULL3", &tnull, "undefined COUNTS", &status);
	check("MIXED scaling keywords");

	long inaxes[2] = {7, 5};
	fits_create_img(f, LONG_IMG, 2, inaxes, &status);
	int iimg[5][7];
	for (int y = 0; y < 5; y++)
		for (int x = 0; x < 7; x++)
			iimg[y][x] = 1000 + x - y;
	fits_write_img(f, TINT, 1, 35, iimg, &status);
	fits_update_key(f, TSTRING, "EXTNAME", "IMG", "an image extension to skip", &status);
	check("IMG extension");

	char *t2type[] = {"TIME", "FLUX"};
	char *t2form[] = {"1D", "1E"};
	char *t2unit[] = {"d", ""};
	fits_create_tbl(f, BINARY_TBL, 10, 2, t2type, t2form, t2unit, "Second_LC", &status);
	double t2[10];
	float f2[10];
	for (int i = 0; i < 10; i++) {
		t2[i] = 100 + (double)i / 48;
		f2[i] = (float)(1 + (double)i / 1000);
	}
	fits_write_col(f, TDOUBLE, 1, 1, 1, 10, t2, &status);
	fits_write_col(f, TFLOAT, 2, 1, 1, 10, f2, &status);
	check("Second_LC");
	fits_close_file(f, &status);
	check("close tables.fits");
}

int main(int argc, char **argv)
{
	if (argc != 2) {
		fprintf(stderr, "usage: make_fixtures DIR\n");
		return 2;
	}
	lightcurve(argv[1]);
	lightcurve_late(argv[1]);
	utc(argv[1]);
	tables(argv[1]);
	return 0;
}
