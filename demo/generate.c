/*
 * generate.c -- deterministic demo and benchmark tables for sheaf.
 *
 * Scenario (invented for sheaf, see demo/README.md): a shipping line's fleet
 * of refrigerated containers sends one telemetry record per container and
 * voyage leg.  Each record says how the cargo arrived (arrival_condition:
 * sound / marginal / spoiled) and how much energy the container's compressor
 * used on the leg (energy_kwh).  The table carries planted structure for the
 * screening to find: a constant column, an ID column, two near-duplicate
 * thermometers, a mostly-empty column, a column with "NA" cells, four drivers
 * of the outcomes, pure-noise columns, categorical columns (one tied to the
 * outcome) and epoch-millisecond stamps that share their leading digits.
 *
 * Method.
 *  - Randomness: xoshiro256** (Blackman & Vigna 2018, "Scrambled linear
 *    pseudorandom number generators"), seeded per row with SplitMix64
 *    (Steele, Lea & Flood 2014) from (seed, row index).  A row's bytes
 *    therefore depend only on (seed, profile, row index): shards written with
 *    --shards concatenate (less their headers) to the single-file output.
 *  - Normal deviates: Box-Muller transform (Box & Muller 1958), both values
 *    of each pair used within the row.
 *  - Class outcome: multinomial logit.  Scores s_k are linear in the
 *    standardised drivers, P(k) = exp(s_k) / sum_j exp(s_j), and the class is
 *    drawn by inverting the cumulative probabilities with one uniform.
 *  - Numbers are formatted by hand (fixed decimals, integers, a short
 *    scientific form) because printf would dominate the run time.
 *  - Output is compressed by file name: .gz with ISA-L's isal_deflate at
 *    level 1 with a gzip wrapper, .zst with libzstd, anything else plain.
 *    One output file is written by a pipeline: generator threads fill row
 *    blocks in a ring, the main thread compresses and writes them in order.
 *    Shards are handed out whole to the threads.
 */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include <isa-l.h>
#include <zstd.h>

#define BLOCK_ROWS 8192u         /* rows per generated block */
#define ROW_MAX_BYTES 640u       /* upper bound of one formatted row */
#define OUT_CHUNK_BYTES (1u << 20)

/* ------------------------------------------------------------------------ */
/* Random numbers                                                           */
/* ------------------------------------------------------------------------ */

typedef struct {
    uint64_t s[4];   /* xoshiro256** state */
    double spare;    /* second Box-Muller value */
    int has_spare;   /* spare is valid */
} rng_t;

static uint64_t mix64(uint64_t z) /* SplitMix64 finaliser, a bijection */
{
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

static uint64_t splitmix_next(uint64_t *x)
{
    *x += 0x9E3779B97F4A7C15ull;
    return mix64(*x);
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

static uint64_t rng_next(rng_t *g)
{
    uint64_t *s = g->s;
    uint64_t result = rotl(s[1] * 5, 7) * 9;
    uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

/* Row stream: depends on (seed key, row) only. */
static void rng_seed_row(rng_t *g, uint64_t key, uint64_t row)
{
    uint64_t x = mix64(key ^ (row * 0xD1B54A32D192ED03ull + 0x8CB92BA72F3D8DD7ull));
    for (int i = 0; i < 4; i++)
        g->s[i] = splitmix_next(&x);
    g->has_spare = 0;
}

static double rng_uniform(rng_t *g) /* [0, 1) */
{
    return (double)(rng_next(g) >> 11) * 0x1.0p-53;
}

static double rng_uniform_open(rng_t *g) /* (0, 1) */
{
    return ((double)(rng_next(g) >> 11) + 0.5) * 0x1.0p-53;
}

static uint32_t rng_below(rng_t *g, uint32_t n) /* 0 .. n-1, Lemire's multiply */
{
    return (uint32_t)(((rng_next(g) >> 32) * (uint64_t)n) >> 32);
}

static double rng_normal(rng_t *g)
{
    if (g->has_spare) {
        g->has_spare = 0;
        return g->spare;
    }
    double u1 = rng_uniform_open(g), u2 = rng_uniform(g);
    double r = sqrt(-2.0 * log(u1));
    double a = 6.283185307179586 * u2;
    g->spare = r * sin(a);
    g->has_spare = 1;
    return r * cos(a);
}

static double rng_exponential(rng_t *g, double mean)
{
    return -mean * log(rng_uniform_open(g));
}

static double clampd(double v, double lo, double hi)
{
    return v < lo ? lo : v > hi ? hi : v;
}

/* ------------------------------------------------------------------------ */
/* Formatting                                                               */
/* ------------------------------------------------------------------------ */

static const char DIGIT_PAIRS[201] =
    "00010203040506070809101112131415161718192021222324252627282930313233343536373839"
    "40414243444546474849505152535455565758596061626364656667686970717273747576777879"
    "8081828384858687888990919293949596979899";

static const uint64_t POW10_U[19] = {
    1ull, 10ull, 100ull, 1000ull, 10000ull, 100000ull, 1000000ull, 10000000ull,
    100000000ull, 1000000000ull, 10000000000ull, 100000000000ull, 1000000000000ull,
    10000000000000ull, 100000000000000ull, 1000000000000000ull, 10000000000000000ull,
    100000000000000000ull, 1000000000000000000ull};

static char *put_u64(char *p, uint64_t v)
{
    char tmp[24];
    char *t = tmp + sizeof tmp;
    while (v >= 100) {
        unsigned d = (unsigned)(v % 100) * 2;
        v /= 100;
        *--t = DIGIT_PAIRS[d + 1];
        *--t = DIGIT_PAIRS[d];
    }
    if (v >= 10) {
        unsigned d = (unsigned)v * 2;
        *--t = DIGIT_PAIRS[d + 1];
        *--t = DIGIT_PAIRS[d];
    } else {
        *--t = (char)('0' + v);
    }
    size_t n = (size_t)(tmp + sizeof tmp - t);
    memcpy(p, t, n);
    return p + n;
}

static char *put_i64(char *p, int64_t v)
{
    if (v < 0) {
        *p++ = '-';
        return put_u64(p, (uint64_t)0 - (uint64_t)v);
    }
    return put_u64(p, (uint64_t)v);
}

/* Exactly `width` digits, leading zeros kept. */
static char *put_u64_padded(char *p, uint64_t v, int width)
{
    for (int i = width - 1; i >= 0; i--) {
        p[i] = (char)('0' + v % 10);
        v /= 10;
    }
    return p + width;
}

/* v rounded half away from zero to `dec` decimals (0..9); no "-0.00". */
static char *put_fixed(char *p, double v, int dec)
{
    double s = v * (double)POW10_U[dec];
    int neg = s < 0;
    if (neg)
        s = -s;
    uint64_t q = (uint64_t)(s + 0.5);
    if (neg && q != 0)
        *p++ = '-';
    if (dec == 0)
        return put_u64(p, q);
    p = put_u64(p, q / POW10_U[dec]);
    *p++ = '.';
    return put_u64_padded(p, q % POW10_U[dec], dec);
}

/* Scientific form with `sig` significant digits (1..15): 3.142e-05. */
static char *put_sci(char *p, double v, int sig)
{
    if (v == 0.0) {
        *p++ = '0';
        return p;
    }
    if (v < 0) {
        *p++ = '-';
        v = -v;
    }
    int e = (int)floor(log10(v));
    double m = v / pow(10.0, e) * (double)POW10_U[sig - 1];
    if (m < (double)POW10_U[sig - 1] - 0.5) { /* log10 rounded up: one decade lower */
        m *= 10.0;
        e--;
    }
    uint64_t q = (uint64_t)(m + 0.5);
    if (q >= POW10_U[sig]) { /* rounding carried into a new digit: 9.9995 -> 1.000e+01 */
        q /= 10;
        e++;
    }
    *p++ = (char)('0' + q / POW10_U[sig - 1]);
    if (sig > 1) {
        *p++ = '.';
        p = put_u64_padded(p, q % POW10_U[sig - 1], sig - 1);
    }
    *p++ = 'e';
    if (e < 0) {
        *p++ = '-';
        e = -e;
    } else {
        *p++ = '+';
    }
    if (e < 10)
        *p++ = '0';
    return put_u64(p, (uint64_t)e);
}

static char *put_hex16(char *p, uint64_t v)
{
    static const char HEX[16] = "0123456789abcdef";
    for (int i = 15; i >= 0; i--) {
        p[i] = HEX[v & 15];
        v >>= 4;
    }
    return p + 16;
}

static char *put_str(char *p, const char *s, size_t n)
{
    memcpy(p, s, n);
    return p + n;
}

/* A categorical level: `cell` is the CSV form (RFC 4180 quoted where needed). */
typedef struct {
    const char *cell; /* text as written to the file */
    size_t len;       /* strlen(cell) */
} level_t;

#define LEVEL(s) { s, sizeof(s) - 1 }
static char *put_level(char *p, const level_t *lv)
{
    return put_str(p, lv->cell, lv->len);
}

/* ------------------------------------------------------------------------ */
/* Profile "demo": refrigerated-container leg reports                       */
/* ------------------------------------------------------------------------ */

static const char DEMO_HEADER[] =
    "reading_id,logged_at_ms,schema_rev,carrier_line,cargo_kind,deck_position,"
    "leg_number,setpoint_c,ambient_c,ambient_aux_c,return_dev_c,door_open_min,"
    "compressor_duty_pct,transit_h,defrost_interval_h,humidity_pct,vibration_g,"
    "battery_v,dust_mg_m3,co2_ppm,fan_rpm,rssi_dbm,fault_flags,"
    "arrival_condition,energy_kwh";

/* --night 2: the next night of the same fleet, with three planted changes
 * for `sheaf drift` (and its stamps a day later): the battery voltage
 * sensors drift 0.35 V low (1.4 sd),
 * a new carrier (Larkspur Freight) appears on 15% of the legs, and the
 * gateways stop reporting rssi_dbm (the column is gone).  Night 1, the
 * default, is the table above, byte for byte as before. */
static int demo_night = 1;
static const char DEMO_HEADER_NIGHT2[] =
    "reading_id,logged_at_ms,schema_rev,carrier_line,cargo_kind,deck_position,"
    "leg_number,setpoint_c,ambient_c,ambient_aux_c,return_dev_c,door_open_min,"
    "compressor_duty_pct,transit_h,defrost_interval_h,humidity_pct,vibration_g,"
    "battery_v,dust_mg_m3,co2_ppm,fan_rpm,fault_flags,"
    "arrival_condition,energy_kwh";
static const level_t NEW_CARRIER = LEVEL("Larkspur Freight");

/* Carriers: unrelated to the outcomes.  Two need RFC 4180 quoting. */
static const level_t CARRIERS[5] = {
    LEVEL("Nordhav"), LEVEL("Blue Heron Lines"), LEVEL("\"Kestrel, Moor & Sons\""),
    LEVEL("\"Osprey \"\"Polar\"\" Freight\""), LEVEL("Tamarind Shipping")};
static const double CARRIER_CUM[5] = {0.30, 0.55, 0.75, 0.90, 1.00};

/* Cargo kinds: related to the class outcome through CARGO_RISK. */
static const level_t CARGOS[6] = {
    LEVEL("bananas"), LEVEL("berries"), LEVEL("citrus"),
    LEVEL("\"fish, frozen\""), LEVEL("flowers"), LEVEL("pharma")};
static const double CARGO_CUM[6] = {0.28, 0.42, 0.62, 0.80, 0.90, 1.00};
static const double CARGO_RISK[6] = {0.3, 1.0, -0.4, -0.6, 0.7, -0.9};
static const double CARGO_SETPOINT[6] = {13.3, 0.5, 6.0, -18.0, 1.0, 5.0};

/* Deck position: unrelated. */
static const level_t DECKS[3] = {LEVEL("deck"), LEVEL("hold"), LEVEL("hatch")};

static const level_t CONDITIONS[3] = {LEVEL("sound"), LEVEL("marginal"), LEVEL("spoiled")};

static unsigned pick_cum(double u, const double *cum, unsigned n)
{
    unsigned i = 0;
    while (i + 1 < n && u >= cum[i])
        i++;
    return i;
}

#define DEMO_EPOCH_MS 1719792000000ull  /* 2024-07-01T00:00:00Z */
#define DEMO_BATCH_ROWS 8u              /* rows a gateway uploads under one stamp */

static char *demo_row(char *p, uint64_t key, uint64_t row)
{
    rng_t g;
    rng_seed_row(&g, key, row);

    /* ID: bijective mix of the row index, so unique within a seed. */
    p = put_hex16(p, mix64(row ^ key));
    *p++ = ',';

    /* Upload stamp shared by a batch of rows; 1.5 s steps plus jitter. */
    uint64_t batch = row / DEMO_BATCH_ROWS;
    uint64_t stamp = DEMO_EPOCH_MS + batch * 1500u + mix64(key + batch) % 500u;
    if (demo_night == 2)
        stamp += 86400000u; /* the next night, a day later */
    p = put_u64(p, stamp);
    p = put_str(p, ",3,", 3);

    unsigned carrier = pick_cum(rng_uniform(&g), CARRIER_CUM, 5);
    unsigned cargo = pick_cum(rng_uniform(&g), CARGO_CUM, 6);
    unsigned deck = rng_below(&g, 3);
    if (demo_night == 2 && rng_uniform(&g) < 0.15)
        p = put_level(p, &NEW_CARRIER);
    else
        p = put_level(p, &CARRIERS[carrier]);
    *p++ = ',';
    p = put_level(p, &CARGOS[cargo]);
    *p++ = ',';
    p = put_level(p, &DECKS[deck]);
    *p++ = ',';

    p = put_u64(p, 1 + rng_below(&g, 6));
    *p++ = ',';

    double setpoint = CARGO_SETPOINT[cargo];
    if (cargo == 2 && rng_uniform(&g) < 0.5)
        setpoint = 8.0; /* some citrus sails warmer */
    p = put_fixed(p, setpoint, 1);
    *p++ = ',';

    /* Two thermometers on the same container: r about 0.99. */
    double ambient = 18.0 + 7.0 * rng_normal(&g);
    double ambient_aux = ambient + 1.0 * rng_normal(&g);
    p = put_fixed(p, ambient, 2);
    *p++ = ',';
    p = put_fixed(p, ambient_aux, 2);
    *p++ = ',';

    /* The four drivers. */
    double dev = 0.4 + 0.8 * rng_normal(&g);
    double door = rng_exponential(&g, 12.0);
    double duty = clampd(62.0 + 14.0 * rng_normal(&g), 5.0, 100.0);
    double log_transit = log(200.0) + 0.5 * rng_normal(&g);
    double transit = exp(log_transit);
    p = put_fixed(p, dev, 2);
    *p++ = ',';
    p = put_fixed(p, door, 1);
    *p++ = ',';
    p = put_fixed(p, duty, 1);
    *p++ = ',';
    p = put_fixed(p, transit, 2);
    *p++ = ',';

    /* Mostly empty: the defrost timer is reported by a minority of units. */
    if (rng_uniform(&g) >= 0.70)
        p = put_fixed(p, 4.0 + 0.5 * rng_below(&g, 17), 1);
    *p++ = ',';

    /* Some "NA" cells. */
    if (rng_uniform(&g) < 0.04)
        p = put_str(p, "NA", 2);
    else
        p = put_fixed(p, clampd(88.0 + 5.0 * rng_normal(&g), 40.0, 100.0), 1);
    *p++ = ',';

    /* Pure noise. */
    p = put_fixed(p, exp(-2.3 + 0.6 * rng_normal(&g)), 4);
    *p++ = ',';
    p = put_fixed(p, 12.6 - (demo_night == 2 ? 0.35 : 0.0) + 0.25 * rng_normal(&g), 2);
    *p++ = ',';
    p = put_sci(p, exp(-9.0 + 1.2 * rng_normal(&g)), 4);
    *p++ = ',';
    p = put_fixed(p, 450.0 + 60.0 * rng_normal(&g), 1);
    *p++ = ',';
    p = put_fixed(p, 2800.0 + 150.0 * rng_normal(&g), 0);
    *p++ = ',';
    int64_t rssi = -110 + (int64_t)rng_below(&g, 61);
    if (demo_night != 2) {
        p = put_i64(p, rssi);
        *p++ = ',';
    }
    unsigned flags = 0;
    if (rng_uniform(&g) < 0.08)
        flags = 1 + rng_below(&g, 127);
    p = put_u64(p, flags);
    *p++ = ',';

    /* Class outcome: multinomial logit in the standardised drivers. */
    double zd = (dev - 0.4) / 0.8;
    double zo = (door - 12.0) / 12.0;
    double zu = (duty - 62.0) / 14.0;
    double zt = (log_transit - log(200.0)) / 0.5;
    double risk = CARGO_RISK[cargo];
    double s1 = -1.0 + 1.0 * zd + 0.6 * zo - 0.5 * zu + 0.5 * zt + 0.5 * risk;
    double s2 = -3.0 + 2.0 * zd + 1.2 * zo - 1.0 * zu + 1.0 * zt + 1.0 * risk;
    double e1 = exp(s1), e2 = exp(s2), tot = 1.0 + e1 + e2;
    double u = rng_uniform(&g) * tot;
    unsigned cls = u < 1.0 ? 0 : u < 1.0 + e1 ? 1 : 2;
    p = put_level(p, &CONDITIONS[cls]);
    *p++ = ',';

    /* Continuous outcome: linear in transit, duty and ambient, plus noise. */
    double kwh = 12.0 + 0.18 * transit + 0.55 * duty + 1.1 * ambient + 10.0 * rng_normal(&g);
    p = put_fixed(p, kwh, 2);
    return p;
}

/* ------------------------------------------------------------------------ */
/* Profile "bench": 28 mixed columns for speed tests                        */
/* ------------------------------------------------------------------------ */

static const char BENCH_HEADER[] =
    "seq,stamp_ms,digit,hits,delta,wide,price,ratio,temp,level,gauss_a,gauss_b,"
    "tiny,huge,signed_sci,spread_sci,code,label,words,sparse_10,sparse_50,na_5,"
    "flag,pct,lat,lon,step,balance";

static const level_t CODES[12] = {
    LEVEL("AXL"), LEVEL("BRV"), LEVEL("CTN"), LEVEL("DUM"), LEVEL("EKO"), LEVEL("FJR"),
    LEVEL("GLP"), LEVEL("HSQ"), LEVEL("IVT"), LEVEL("JWN"), LEVEL("KOY"), LEVEL("LZE")};
static const level_t LABELS[6] = {
    LEVEL("north"), LEVEL("\"south, inner\""), LEVEL("east"), LEVEL("\"west, outer\""),
    LEVEL("\"say \"\"hi\"\"\""), LEVEL("centre")};
static const char *const WORDS[16] = {
    "amber", "basalt", "cobalt", "dune", "ember", "fjord", "granite", "heath",
    "indigo", "juniper", "kelp", "lichen", "marl", "nettle", "ochre", "peat"};

static char *bench_row(char *p, uint64_t key, uint64_t row)
{
    rng_t g;
    rng_seed_row(&g, key, row);

    p = put_u64(p, row + 1);
    *p++ = ',';
    p = put_u64(p, DEMO_EPOCH_MS + row * 250u + rng_below(&g, 250));
    *p++ = ',';
    p = put_u64(p, rng_below(&g, 10));
    *p++ = ',';
    p = put_u64(p, (uint64_t)rng_exponential(&g, 8.0));
    *p++ = ',';
    p = put_i64(p, (int64_t)rng_below(&g, 100001) - 50000);
    *p++ = ',';
    p = put_u64(p, rng_next(&g) % 1000000000000ull);
    *p++ = ',';
    p = put_fixed(p, exp(3.0 + 1.0 * rng_normal(&g)), 2);
    *p++ = ',';
    p = put_fixed(p, rng_uniform(&g), 4);
    *p++ = ',';
    p = put_fixed(p, 15.0 + 8.0 * rng_normal(&g), 1);
    *p++ = ',';
    p = put_fixed(p, 1000.0 + 50.0 * rng_normal(&g), 3);
    *p++ = ',';
    p = put_fixed(p, rng_normal(&g), 6);
    *p++ = ',';
    p = put_fixed(p, rng_normal(&g), 6);
    *p++ = ',';
    p = put_sci(p, exp(-13.0 + 1.5 * rng_normal(&g)), 4);
    *p++ = ',';
    p = put_sci(p, exp(27.0 + 2.0 * rng_normal(&g)), 6);
    *p++ = ',';
    p = put_sci(p, 1e-3 * rng_normal(&g), 3);
    *p++ = ',';
    p = put_sci(p, exp(8.0 * rng_normal(&g)), 5);
    *p++ = ',';
    p = put_level(p, &CODES[rng_below(&g, 12)]);
    *p++ = ',';
    p = put_level(p, &LABELS[rng_below(&g, 6)]);
    *p++ = ',';
    unsigned nw = 1 + rng_below(&g, 3);
    for (unsigned i = 0; i < nw; i++) {
        const char *w = WORDS[rng_below(&g, 16)];
        if (i)
            *p++ = ' ';
        p = put_str(p, w, strlen(w));
    }
    *p++ = ',';
    if (rng_uniform(&g) >= 0.10)
        p = put_fixed(p, 100.0 * rng_normal(&g), 2);
    *p++ = ',';
    if (rng_uniform(&g) >= 0.50)
        p = put_u64(p, rng_below(&g, 5000));
    *p++ = ',';
    if (rng_uniform(&g) < 0.05)
        p = put_str(p, "NA", 2);
    else
        p = put_fixed(p, 3.0 + rng_normal(&g), 3);
    *p++ = ',';
    p = put_u64(p, rng_uniform(&g) < 0.3);
    *p++ = ',';
    p = put_fixed(p, 100.0 * rng_uniform(&g), 1);
    *p++ = ',';
    p = put_fixed(p, -60.0 + 130.0 * rng_uniform(&g), 5);
    *p++ = ',';
    p = put_fixed(p, -180.0 + 360.0 * rng_uniform(&g), 5);
    *p++ = ',';
    p = put_i64(p, (int64_t)rng_below(&g, 7) - 3);
    *p++ = ',';
    p = put_fixed(p, 1e6 * (2.0 * rng_uniform(&g) - 1.0), 2);
    return p;
}

/* ------------------------------------------------------------------------ */
/* Blocks of rows                                                           */
/* ------------------------------------------------------------------------ */

typedef char *(*row_fn)(char *p, uint64_t key, uint64_t row);

typedef struct {
    row_fn row;         /* row formatter of the profile */
    const char *header; /* header line, no newline */
    uint64_t key;       /* seed key */
    int crlf;           /* end records with CRLF instead of LF */
} table_t;

static size_t gen_block(const table_t *t, uint64_t r0, uint64_t r1, char *buf)
{
    char *p = buf;
    for (uint64_t r = r0; r < r1; r++) {
        p = t->row(p, t->key, r);
        if (t->crlf)
            *p++ = '\r';
        *p++ = '\n';
    }
    return (size_t)(p - buf);
}

/* ------------------------------------------------------------------------ */
/* Sinks: plain, gzip (ISA-L), zstd                                         */
/* ------------------------------------------------------------------------ */

enum { SINK_PLAIN, SINK_GZIP, SINK_ZSTD };

typedef struct {
    int kind;                 /* SINK_* */
    int fd;                   /* destination */
    int owns_fd;              /* close fd at the end */
    const char *name;         /* for messages */
    struct isal_zstream zs;   /* gzip stream */
    uint8_t *level_buf;       /* ISA-L level-1 work area */
    ZSTD_CCtx *zc;            /* zstd context */
    uint8_t *out;             /* compressed bytes waiting to be written */
    size_t out_cap;           /* size of out */
    uint64_t bytes_written;   /* bytes written to fd */
} sink_t;

static void die(const char *fmt, const char *arg)
{
    fprintf(stderr, "generate: ");
    fprintf(stderr, fmt, arg);
    fputc('\n', stderr);
    exit(1);
}

static void die_errno(const char *what, const char *name)
{
    fprintf(stderr, "generate: cannot %s %s: %s\n", what, name, strerror(errno));
    exit(1);
}

static int ends_with(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    return n >= m && strcmp(s + n - m, suffix) == 0;
}

static void write_all(sink_t *k, const void *buf, size_t n)
{
    const char *p = buf;
    while (n > 0) {
        ssize_t w = write(k->fd, p, n);
        if (w < 0) {
            if (errno == EINTR)
                continue;
            die_errno("write", k->name);
        }
        p += w;
        n -= (size_t)w;
        k->bytes_written += (uint64_t)w;
    }
}

static void sink_open(sink_t *k, const char *path)
{
    memset(k, 0, sizeof *k);
    k->name = path;
    if (strcmp(path, "-") == 0) {
        k->fd = 1;
        k->kind = SINK_PLAIN;
        return;
    }
    k->fd = open(path, O_WRONLY | O_CREAT | O_TRUNC, 0644);
    if (k->fd < 0)
        die_errno("create", path);
    k->owns_fd = 1;
    if (ends_with(path, ".gz"))
        k->kind = SINK_GZIP;
    else if (ends_with(path, ".zst"))
        k->kind = SINK_ZSTD;
    else
        k->kind = SINK_PLAIN;

    if (k->kind == SINK_GZIP) {
        k->out_cap = OUT_CHUNK_BYTES;
        k->out = malloc(k->out_cap);
        k->level_buf = malloc(ISAL_DEF_LVL1_DEFAULT);
        if (!k->out || !k->level_buf)
            die("out of memory for %s", path);
        isal_deflate_init(&k->zs);
        k->zs.level = 1;
        k->zs.level_buf = k->level_buf;
        k->zs.level_buf_size = ISAL_DEF_LVL1_DEFAULT;
        k->zs.gzip_flag = IGZIP_GZIP; /* generic gzip header and trailer */
        k->zs.flush = NO_FLUSH;
    } else if (k->kind == SINK_ZSTD) {
        k->out_cap = ZSTD_CStreamOutSize();
        k->out = malloc(k->out_cap);
        k->zc = ZSTD_createCCtx();
        if (!k->out || !k->zc)
            die("out of memory for %s", path);
        ZSTD_CCtx_setParameter(k->zc, ZSTD_c_compressionLevel, 3);
        ZSTD_CCtx_setParameter(k->zc, ZSTD_c_checksumFlag, 1);
    }
}

static void sink_gzip(sink_t *k, const void *buf, size_t n, int last)
{
    const uint8_t *p = buf;
    for (;;) {
        /* avail_in is 32-bit: feed at most 1 GiB at a time */
        size_t take = n > (1u << 30) ? (1u << 30) : n;
        k->zs.next_in = (uint8_t *)p;
        k->zs.avail_in = (uint32_t)take;
        k->zs.end_of_stream = (uint16_t)(last && take == n);
        do {
            k->zs.next_out = k->out;
            k->zs.avail_out = (uint32_t)k->out_cap;
            if (isal_deflate(&k->zs) != COMP_OK)
                die("gzip compression failed for %s", k->name);
            write_all(k, k->out, k->out_cap - k->zs.avail_out);
        } while (k->zs.avail_in > 0 ||
                 (k->zs.end_of_stream && k->zs.internal_state.state != ZSTATE_END));
        p += take;
        n -= take;
        if (n == 0)
            break;
    }
}

static void sink_zstd(sink_t *k, const void *buf, size_t n, int last)
{
    ZSTD_inBuffer in = {buf, n, 0};
    ZSTD_EndDirective mode = last ? ZSTD_e_end : ZSTD_e_continue;
    for (;;) {
        ZSTD_outBuffer out = {k->out, k->out_cap, 0};
        size_t rc = ZSTD_compressStream2(k->zc, &out, &in, mode);
        if (ZSTD_isError(rc))
            die("zstd compression failed: %s", ZSTD_getErrorName(rc));
        write_all(k, k->out, out.pos);
        if (last ? rc == 0 : in.pos == in.size)
            break;
    }
}

static void sink_write(sink_t *k, const void *buf, size_t n)
{
    if (k->kind == SINK_GZIP)
        sink_gzip(k, buf, n, 0);
    else if (k->kind == SINK_ZSTD)
        sink_zstd(k, buf, n, 0);
    else
        write_all(k, buf, n);
}

static void sink_close(sink_t *k)
{
    if (k->kind == SINK_GZIP)
        sink_gzip(k, "", 0, 1);
    else if (k->kind == SINK_ZSTD)
        sink_zstd(k, "", 0, 1);
    if (k->owns_fd && close(k->fd) != 0)
        die_errno("close", k->name);
    free(k->out);
    free(k->level_buf);
    ZSTD_freeCCtx(k->zc);
}

static void sink_header(sink_t *k, const table_t *t)
{
    sink_write(k, t->header, strlen(t->header));
    sink_write(k, t->crlf ? "\r\n" : "\n", t->crlf ? 2 : 1);
}

/* ------------------------------------------------------------------------ */
/* One file through a pipeline: generator threads -> ring -> main writes    */
/* ------------------------------------------------------------------------ */

typedef struct {
    char *buf;         /* formatted rows */
    size_t len;        /* bytes in buf */
    uint64_t block;    /* block this slot is free for, or holds */
    int full;          /* buf holds `block` */
} slot_t;

typedef struct {
    const table_t *table;
    uint64_t row_begin, row_end; /* rows of this file */
    uint64_t nblocks;
    unsigned nslots, ngen;
    slot_t *slots;
    pthread_mutex_t mu;
    pthread_cond_t filled, freed;
} ring_t;

typedef struct {
    ring_t *ring;
    unsigned index; /* generator number */
} gen_arg_t;

static void *ring_generator(void *arg)
{
    gen_arg_t *a = arg;
    ring_t *q = a->ring;
    for (uint64_t b = a->index; b < q->nblocks; b += q->ngen) {
        slot_t *s = &q->slots[b % q->nslots];
        pthread_mutex_lock(&q->mu);
        while (s->block != b || s->full)
            pthread_cond_wait(&q->freed, &q->mu);
        pthread_mutex_unlock(&q->mu);

        uint64_t r0 = q->row_begin + b * BLOCK_ROWS;
        uint64_t r1 = r0 + BLOCK_ROWS < q->row_end ? r0 + BLOCK_ROWS : q->row_end;
        size_t len = gen_block(q->table, r0, r1, s->buf);

        pthread_mutex_lock(&q->mu);
        s->len = len;
        s->full = 1;
        pthread_cond_broadcast(&q->filled);
        pthread_mutex_unlock(&q->mu);
    }
    return NULL;
}

static char *alloc_block(void)
{
    char *b = malloc((size_t)BLOCK_ROWS * ROW_MAX_BYTES);
    if (!b)
        die("out of memory%s", "");
    return b;
}

/* Rows [r0, r1) of `t` into `path`, with `ngen` generator threads (0: inline). */
static uint64_t write_file(const table_t *t, const char *path, uint64_t r0, uint64_t r1,
                           unsigned ngen)
{
    sink_t k;
    sink_open(&k, path);
    sink_header(&k, t);
    uint64_t nblocks = (r1 - r0 + BLOCK_ROWS - 1) / BLOCK_ROWS;

    if (ngen == 0 || nblocks < 2) {
        char *buf = alloc_block();
        for (uint64_t r = r0; r < r1; r += BLOCK_ROWS) {
            uint64_t e = r + BLOCK_ROWS < r1 ? r + BLOCK_ROWS : r1;
            sink_write(&k, buf, gen_block(t, r, e, buf));
        }
        free(buf);
    } else {
        ring_t q = {.table = t, .row_begin = r0, .row_end = r1, .nblocks = nblocks,
                    .ngen = ngen, .nslots = 2 * ngen + 1};
        q.slots = calloc(q.nslots, sizeof *q.slots);
        if (!q.slots)
            die("out of memory%s", "");
        for (unsigned i = 0; i < q.nslots; i++) {
            q.slots[i].buf = alloc_block();
            q.slots[i].block = i;
        }
        pthread_mutex_init(&q.mu, NULL);
        pthread_cond_init(&q.filled, NULL);
        pthread_cond_init(&q.freed, NULL);
        pthread_t *th = calloc(ngen, sizeof *th);
        gen_arg_t *args = calloc(ngen, sizeof *args);
        if (!th || !args)
            die("out of memory%s", "");
        for (unsigned i = 0; i < ngen; i++) {
            args[i] = (gen_arg_t){&q, i};
            if (pthread_create(&th[i], NULL, ring_generator, &args[i]) != 0)
                die("cannot start a thread%s", "");
        }
        for (uint64_t b = 0; b < nblocks; b++) {
            slot_t *s = &q.slots[b % q.nslots];
            pthread_mutex_lock(&q.mu);
            while (!(s->full && s->block == b))
                pthread_cond_wait(&q.filled, &q.mu);
            pthread_mutex_unlock(&q.mu);

            sink_write(&k, s->buf, s->len);

            pthread_mutex_lock(&q.mu);
            s->full = 0;
            s->block = b + q.nslots;
            pthread_cond_broadcast(&q.freed);
            pthread_mutex_unlock(&q.mu);
        }
        for (unsigned i = 0; i < ngen; i++)
            pthread_join(th[i], NULL);
        for (unsigned i = 0; i < q.nslots; i++)
            free(q.slots[i].buf);
        free(q.slots);
        free(th);
        free(args);
        pthread_mutex_destroy(&q.mu);
        pthread_cond_destroy(&q.filled);
        pthread_cond_destroy(&q.freed);
    }
    sink_close(&k);
    return k.bytes_written;
}

/* ------------------------------------------------------------------------ */
/* Shards: whole files handed out to threads                                */
/* ------------------------------------------------------------------------ */

typedef struct {
    const table_t *table;
    const char *prefix, *suffix;
    uint64_t rows;
    unsigned nshards;
    unsigned next;          /* next shard to write */
    uint64_t bytes;         /* total bytes written */
    pthread_mutex_t mu;
} shard_job_t;

static void shard_name(char *dst, size_t cap, const shard_job_t *j, unsigned i)
{
    int width = j->nshards >= 100 ? (j->nshards >= 1000 ? 4 : 3) : 2;
    snprintf(dst, cap, "%s-%0*u%s", j->prefix, width, i + 1, j->suffix);
}

static void *shard_worker(void *arg)
{
    shard_job_t *j = arg;
    for (;;) {
        pthread_mutex_lock(&j->mu);
        unsigned i = j->next++;
        pthread_mutex_unlock(&j->mu);
        if (i >= j->nshards)
            break;
        uint64_t r0 = j->rows * i / j->nshards, r1 = j->rows * (i + 1) / j->nshards;
        size_t cap = strlen(j->prefix) + strlen(j->suffix) + 16;
        char *name = malloc(cap);
        if (!name)
            die("out of memory%s", "");
        shard_name(name, cap, j, i);
        uint64_t n = write_file(j->table, name, r0, r1, 0);
        free(name);
        pthread_mutex_lock(&j->mu);
        j->bytes += n;
        pthread_mutex_unlock(&j->mu);
    }
    return NULL;
}

/* ------------------------------------------------------------------------ */
/* Command line                                                             */
/* ------------------------------------------------------------------------ */

static void usage(FILE *f)
{
    fputs(
        "usage: generate [options] -o PATH\n"
        "       generate [options] --shards K --prefix P\n"
        "\n"
        "Writes a deterministic CSV table with planted structure (see demo/README.md).\n"
        "Compression follows the name: .gz (gzip, ISA-L level 1), .zst (zstd), else plain;\n"
        "'-' writes plain CSV to standard output.\n"
        "\n"
        "  -o, --output PATH     file to write\n"
        "  --rows N              data rows (default 1000000)\n"
        "  --seed S              seed; same seed and rows give the same bytes (default 1)\n"
        "  --profile NAME        demo: refrigerated-container leg reports (default)\n"
        "                        bench: 28 mixed columns for speed tests\n"
        "  --night N             demo: 1 (default) or 2, the next night with planted drift\n"
        "                        (a sensor drifts, a carrier appears, rssi_dbm is gone)\n"
        "  --shards K            write K files P-01.csv.gz ... splitting the rows in order\n"
        "  --prefix P            name prefix of the shard files\n"
        "  --shard-suffix EXT    suffix of shard files (default .csv.gz)\n"
        "  --threads T           worker threads (default: online CPUs, at most 8)\n"
        "  --crlf                end records with CRLF instead of LF\n"
        "  -v, --verbose         report rows, bytes and seconds on standard error\n"
        "  -h, --help            this text\n",
        f);
}

static uint64_t parse_u64(const char *s, const char *opt)
{
    char *end;
    errno = 0;
    unsigned long long v = strtoull(s, &end, 10);
    if (errno || end == s || *end || s[0] == '-')
        die("bad number for %s", opt);
    return (uint64_t)v;
}

static double now_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int main(int argc, char **argv)
{
    const char *output = NULL, *prefix = NULL, *suffix = ".csv.gz", *profile = "demo";
    uint64_t rows = 1000000, seed = 1;
    unsigned shards = 0, threads = 0;
    int crlf = 0, verbose = 0;

    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        const char *v = i + 1 < argc ? argv[i + 1] : NULL;
#define NEED_VALUE() do { if (!v) die("%s needs a value", a); i++; } while (0)
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            return 0;
        } else if (!strcmp(a, "-o") || !strcmp(a, "--output")) {
            NEED_VALUE();
            output = v;
        } else if (!strcmp(a, "--rows")) {
            NEED_VALUE();
            rows = parse_u64(v, a);
        } else if (!strcmp(a, "--seed")) {
            NEED_VALUE();
            seed = parse_u64(v, a);
        } else if (!strcmp(a, "--profile")) {
            NEED_VALUE();
            profile = v;
        } else if (!strcmp(a, "--night")) {
            NEED_VALUE();
            uint64_t n = parse_u64(v, a);
            if (n < 1 || n > 2)
                die("--night must be 1 or 2, not %s", v);
            demo_night = (int)n;
        } else if (!strcmp(a, "--shards")) {
            NEED_VALUE();
            uint64_t k = parse_u64(v, a);
            if (k < 1 || k > 9999)
                die("--shards must be 1..9999, not %s", v);
            shards = (unsigned)k;
        } else if (!strcmp(a, "--prefix")) {
            NEED_VALUE();
            prefix = v;
        } else if (!strcmp(a, "--shard-suffix")) {
            NEED_VALUE();
            suffix = v;
        } else if (!strcmp(a, "--threads")) {
            NEED_VALUE();
            uint64_t t = parse_u64(v, a);
            if (t < 1 || t > 64)
                die("--threads must be 1..64, not %s", v);
            threads = (unsigned)t;
        } else if (!strcmp(a, "--crlf")) {
            crlf = 1;
        } else if (!strcmp(a, "-v") || !strcmp(a, "--verbose")) {
            verbose = 1;
        } else {
            usage(stderr);
            die("unknown option %s", a);
        }
#undef NEED_VALUE
    }

    table_t t = {.crlf = crlf};
    if (!strcmp(profile, "demo")) {
        t.row = demo_row;
        t.header = demo_night == 2 ? DEMO_HEADER_NIGHT2 : DEMO_HEADER;
    } else if (!strcmp(profile, "bench")) {
        t.row = bench_row;
        t.header = BENCH_HEADER;
    } else {
        die("unknown profile %s (demo or bench)", profile);
    }
    /* The profile takes part in the key so the two tables do not share streams. */
    t.key = mix64(seed ^ (t.row == bench_row ? 0x6A09E667F3BCC909ull : 0));
    if (demo_night != 1) {
        if (t.row != demo_row)
            die("--night applies to the demo profile only%s", "");
        t.key = mix64(t.key ^ 0xBB67AE8584CAA73Bull); /* the next night draws anew */
    }

    if (threads == 0) {
        long n = sysconf(_SC_NPROCESSORS_ONLN);
        threads = n < 1 ? 1 : n > 8 ? 8 : (unsigned)n;
    }

    double t0 = now_seconds();
    uint64_t bytes;
    if (shards) {
        if (!prefix)
            die("--shards needs --prefix%s", "");
        if (output)
            die("give either -o or --shards, not both%s", "");
        shard_job_t j = {.table = &t, .prefix = prefix, .suffix = suffix, .rows = rows,
                         .nshards = shards};
        pthread_mutex_init(&j.mu, NULL);
        unsigned nt = threads < shards ? threads : shards;
        pthread_t *th = calloc(nt, sizeof *th);
        if (!th)
            die("out of memory%s", "");
        for (unsigned i = 0; i < nt; i++)
            if (pthread_create(&th[i], NULL, shard_worker, &j) != 0)
                die("cannot start a thread%s", "");
        for (unsigned i = 0; i < nt; i++)
            pthread_join(th[i], NULL);
        free(th);
        pthread_mutex_destroy(&j.mu);
        bytes = j.bytes;
    } else {
        if (!output) {
            usage(stderr);
            die("no output: give -o PATH or --shards K --prefix P%s", "");
        }
        /* The main thread compresses; threads-1 generators (at least one) fill rows. */
        bytes = write_file(&t, output, 0, rows, threads > 1 ? threads - 1 : 0);
    }
    if (verbose)
        fprintf(stderr, "generate: %llu rows, %llu bytes, %.2f s\n",
                (unsigned long long)rows, (unsigned long long)bytes, now_seconds() - t0);
    return 0;
}
