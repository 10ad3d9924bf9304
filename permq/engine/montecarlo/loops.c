/* permq's Monte Carlo inner loops in C: built when permq is installed (hatch_build.py) and
 * loaded with ctypes by native.py, so that the first statement of a fresh process runs them
 * at full speed (no compiler to start, no cache to read).
 *
 * They take their random integers from the caller (numpy's generator, drawn in the seeded
 * stream units of sampling.py), and every sum runs item by item in a fixed order, so that the
 * numpy path in draws.py, which walks the same steps vectorised over the draws, gives the same
 * numbers bit for bit. Random integers r are rows of `stride` 32-bit (or 64-bit) words.
 *
 * A uniform choice among the m items left at step i is i + floor(r * m / 2^32) (the
 * multiply-shift map; its bias is below m / 2^32 per step).
 */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#ifndef PERMQ_SOURCE_CRC
#define PERMQ_SOURCE_CRC 0u
#endif

#if defined(_WIN32)
#define EXPORT __declspec(dllexport)
#else
#define EXPORT __attribute__((visibility("default")))
#endif

/* The CRC-32 of this file when it was built: native.py compares it with the source beside it. */
EXPORT uint32_t permq_source_crc(void) { return PERMQ_SOURCE_CRC; }

static inline int64_t pick(uint32_t r, int64_t i, int64_t m) {
    return i + (int64_t)(((uint64_t)r * (uint64_t)m) >> 32);
}

/* Two samples: a random n1-subset of the N scores by a partial Fisher-Yates shuffle (n1 steps,
 * undone after each draw). s_out gets the subset's score sum; when u_out is given, also how
 * many chosen items came from the second group (index >= n1). Two draws run side by side:
 * each sums its own items in its own order (the same numbers as one at a time), and the
 * processor overlaps the two chains of additions. */
typedef struct {
    double *w, *second;      /* the scores and 1.0 for the second group's, as they stand */
    int64_t *js;
} SubsetWork;

static int subset_work_init(SubsetWork *k, const double *a, int64_t N, int64_t n1) {
    k->w = malloc(sizeof(double) * (size_t)N);
    k->second = malloc(sizeof(double) * (size_t)N);
    k->js = malloc(sizeof(int64_t) * (size_t)(n1 > 0 ? n1 : 1));
    if (!k->w || !k->second || !k->js) return -1;
    memcpy(k->w, a, sizeof(double) * (size_t)N);
    for (int64_t i = 0; i < N; i++) k->second[i] = i >= n1 ? 1.0 : 0.0;
    return 0;
}

static void subset_work_free(SubsetWork *k) { free(k->w); free(k->second); free(k->js); }

/* back to the original order after a draw: copy it whole when that is shorter than undoing
 * the swaps (the same arrangement either way) */
static inline void subset_reset(SubsetWork *k, const double *a, const double *second0, int64_t N,
                                int64_t n1, int with_u) {
    if (N <= 4 * n1) {
        memcpy(k->w, a, sizeof(double) * (size_t)N);
        if (with_u) memcpy(k->second, second0, sizeof(double) * (size_t)N);
        return;
    }
    for (int64_t i = n1 - 1; i >= 0; i--) {
        int64_t j = k->js[i];
        double t = k->w[i]; k->w[i] = k->w[j]; k->w[j] = t;
        if (with_u) { double f = k->second[i]; k->second[i] = k->second[j]; k->second[j] = f; }
    }
}

static void subset_rows(SubsetWork *ka, SubsetWork *kb, const double *a, const double *second0,
                        int64_t N, int64_t n1, const uint32_t *r, int64_t stride, int64_t size,
                        double *s_out, int64_t *u_out) {
    int with_u = u_out != NULL;
    int64_t row = 0;
    for (; row + 1 < size; row += 2) {                    /* two draws at a time */
        const uint32_t *ra = r + row * stride, *rb = ra + stride;
        double *wa = ka->w, *wb = kb->w, *ga = ka->second, *gb = kb->second;
        double sa = 0.0, sb = 0.0, ua = 0.0, ub = 0.0;
        for (int64_t i = 0; i < n1; i++) {
            int64_t ja = pick(ra[i], i, N - i), jb = pick(rb[i], i, N - i);
            ka->js[i] = ja; kb->js[i] = jb;
            double ta = wa[i]; wa[i] = wa[ja]; wa[ja] = ta;
            double tb = wb[i]; wb[i] = wb[jb]; wb[jb] = tb;
            sa += wa[i];
            sb += wb[i];
            if (with_u) {                                   /* branch-free: groups are random */
                double fa = ga[i]; ga[i] = ga[ja]; ga[ja] = fa;
                double fb = gb[i]; gb[i] = gb[jb]; gb[jb] = fb;
                ua += ga[i];
                ub += gb[i];
            }
        }
        s_out[row] = sa;
        s_out[row + 1] = sb;
        if (with_u) { u_out[row] = (int64_t)ua; u_out[row + 1] = (int64_t)ub; }
        subset_reset(ka, a, second0, N, n1, with_u);
        subset_reset(kb, a, second0, N, n1, with_u);
    }
    for (; row < size; row++) {                           /* the last one of an odd count */
        const uint32_t *rr = r + row * stride;
        double *w = ka->w, *g = ka->second;
        double s = 0.0, u = 0.0;
        for (int64_t i = 0; i < n1; i++) {
            int64_t j = pick(rr[i], i, N - i);
            ka->js[i] = j;
            double t = w[i]; w[i] = w[j]; w[j] = t;
            s += w[i];
            if (with_u) {
                double f = g[i]; g[i] = g[j]; g[j] = f;
                u += g[i];
            }
        }
        s_out[row] = s;
        if (with_u) u_out[row] = (int64_t)u;
        subset_reset(ka, a, second0, N, n1, with_u);
    }
}

static double *second_group(int64_t N, int64_t n1) {
    double *g = malloc(sizeof(double) * (size_t)(N > 0 ? N : 1));
    if (g) for (int64_t i = 0; i < N; i++) g[i] = i >= n1 ? 1.0 : 0.0;
    return g;
}

EXPORT int permq_subset_sums(const double *a, int64_t N, int64_t n1, const uint32_t *r,
                             int64_t stride, int64_t size, double *s_out, int64_t *u_out) {
    SubsetWork ka = {0}, kb = {0};
    double *second0 = second_group(N, n1);
    int status = -1;
    if (second0 && subset_work_init(&ka, a, N, n1) == 0 && subset_work_init(&kb, a, N, n1) == 0) {
        subset_rows(&ka, &kb, a, second0, N, n1, r, stride, size, s_out, u_out);
        status = 0;
    }
    subset_work_free(&ka); subset_work_free(&kb); free(second0);
    return status;
}

#if defined(__SIZEOF_INT128__)
/* numpy's PCG64 (128-bit LCG, XSL-RR output), stepped here so that the random integers need not
 * pass through memory: state[0..1] the state (high, low words), state[2..3] the increment. Each
 * call gives the raw 64-bit values random_raw would, and leaves the state where random_raw would
 * (the caller hands it back to the generator). */
typedef unsigned __int128 u128;
#define PCG64_MULT (((u128)2549297995355413924ULL << 64) + 4865540595714422341ULL)


static inline uint64_t pcg64_output(u128 s) {
    uint64_t x = (uint64_t)(s >> 64) ^ (uint64_t)s;
    unsigned rot = (unsigned)(s >> 122);
    return (x >> rot) | (x << ((64 - rot) & 63));
}

/* The next `count` values of the stream, as random_raw gives them: every fourth
 * step runs as one of four chains (state_{k+4} = A^4 state_k + c (1 + A + A^2 + A^3)), which the
 * processor overlaps, instead of one chain of 128-bit multiplications */
static void pcg64_fill(u128 *st, u128 inc, uint64_t *out, int64_t count) {
    if (count <= 0) return;
    const u128 m = PCG64_MULT, m2 = m * m;
    const u128 a4 = m2 * m2, c4 = inc * (1 + m + m2 + m2 * m);
    u128 s0 = *st * m + inc, s1 = s0 * m + inc, s2 = s1 * m + inc, s3 = s2 * m + inc;
    u128 last = *st;
    int64_t i = 0;
    for (; i + 3 < count; i += 4) {
        out[i] = pcg64_output(s0);
        out[i + 1] = pcg64_output(s1);
        out[i + 2] = pcg64_output(s2);
        out[i + 3] = pcg64_output(s3);
        last = s3;
        s0 = s0 * a4 + c4;
        s1 = s1 * a4 + c4;
        s2 = s2 * a4 + c4;
        s3 = s3 * a4 + c4;
    }
    u128 rest[3] = {s0, s1, s2};
    for (int64_t k = 0; i < count; i++, k++) {
        out[i] = pcg64_output(rest[k]);
        last = rest[k];
    }
    *st = last;
}

EXPORT int permq_pcg64_raw(uint64_t *state, int64_t count, uint64_t *out) {
    u128 st = ((u128)state[0] << 64) | state[1], inc = ((u128)state[2] << 64) | state[3];
    pcg64_fill(&st, inc, out, count);
    state[0] = (uint64_t)(st >> 64); state[1] = (uint64_t)st;
    return 0;
}

/* permq_subset_sums with its random integers drawn from the PCG64 state as random_u32 draws
 * them (ceil(n1 / 2) raw values a draw, low half first), a few hundred draws at a time. */
#define PCG_ROWS 256
EXPORT int permq_subset_sums_pcg(const double *a, int64_t N, int64_t n1, uint64_t *state,
                                 int64_t size, double *s_out, int64_t *u_out) {
    int64_t per_row = (n1 + 1) / 2;
    SubsetWork ka = {0}, kb = {0};
    double *second0 = second_group(N, n1);
    uint64_t *raw = malloc(sizeof(uint64_t) * (size_t)(per_row > 0 ? per_row : 1) * PCG_ROWS);
    int status = -1;
    if (second0 && raw && subset_work_init(&ka, a, N, n1) == 0
            && subset_work_init(&kb, a, N, n1) == 0) {
        u128 st = ((u128)state[0] << 64) | state[1], inc = ((u128)state[2] << 64) | state[3];
        for (int64_t done = 0; done < size; done += PCG_ROWS) {
            int64_t rows = size - done < PCG_ROWS ? size - done : PCG_ROWS;
            pcg64_fill(&st, inc, raw, rows * per_row);
            subset_rows(&ka, &kb, a, second0, N, n1, (const uint32_t *)raw, 2 * per_row, rows,
                        s_out + done, u_out ? u_out + done : NULL);
        }
        state[0] = (uint64_t)(st >> 64); state[1] = (uint64_t)st;
        status = 0;
    }
    subset_work_free(&ka); subset_work_free(&kb); free(second0); free(raw);
    return status;
}

/* The same draws for scores that are whole numbers (a grid's integers) with every sum exact:
 * v[i] = score_i * 2^shift, plus 1 for the second group's items when u_out is given, so one
 * 64-bit sum carries both the score sum (its high bits) and the count u (its low bits). Exact
 * integer sums are the floating-point sums of permq_subset_sums, bit for bit, when the caller
 * has checked that every partial sum stays below 2^53 (and the packed ones below 2^62). */
/* One integer subset draw (the n1 steps of rr on w), its packed sum; w is put back after. */
static inline int64_t int_subset_draw(int64_t *w, const int64_t *v, int64_t N, int64_t n1,
                                      const uint32_t *rr, int64_t *js, int copy) {
    int64_t t = 0;
    for (int64_t i = 0; i < n1; i++) {
        int64_t j = pick(rr[i], i, N - i);
        js[i] = j;
        int64_t x = w[i]; w[i] = w[j]; w[j] = x;
        t += w[i];
    }
    if (copy) {
        memcpy(w, v, sizeof(int64_t) * (size_t)N);
    } else {
        for (int64_t i = n1 - 1; i >= 0; i--) {
            int64_t j = js[i];
            int64_t x = w[i]; w[i] = w[j]; w[j] = x;
        }
    }
    return t;
}

EXPORT int permq_subset_sums_pcg_int(const int64_t *v, int64_t N, int64_t n1, int64_t shift,
                                     uint64_t *state, int64_t size, double *s_out,
                                     int64_t *u_out) {
    int64_t per_row = (n1 + 1) / 2;
    size_t nb = sizeof(int64_t) * (size_t)(N > 0 ? N : 1), kb = sizeof(int64_t) * (size_t)(n1 > 0 ? n1 : 1);
    int64_t *wa = malloc(nb), *wb = malloc(nb), *ja = malloc(kb), *jb = malloc(kb);
    uint64_t *raw = malloc(sizeof(uint64_t) * (size_t)(per_row > 0 ? per_row : 1) * PCG_ROWS);
    if (!wa || !wb || !ja || !jb || !raw) {
        free(wa); free(wb); free(ja); free(jb); free(raw);
        return -1;
    }
    memcpy(wa, v, nb); memcpy(wb, v, nb);
    int copy = N <= 4 * n1;
    int64_t low = ((int64_t)1 << shift) - 1;
    u128 st = ((u128)state[0] << 64) | state[1], inc = ((u128)state[2] << 64) | state[3];
    for (int64_t done = 0; done < size; done += PCG_ROWS) {
        int64_t rows = size - done < PCG_ROWS ? size - done : PCG_ROWS;
        pcg64_fill(&st, inc, raw, rows * per_row);
        const uint32_t *r32 = (const uint32_t *)raw;
        int64_t row = 0;
        /* two draws side by side (each on its own copy, the same numbers as one at a time):
         * the processor overlaps their chains of swaps and additions */
        for (; row + 1 < rows; row += 2) {
            const uint32_t *ra = r32 + row * 2 * per_row, *rb = ra + 2 * per_row;
            int64_t ta = 0, tb = 0;
            for (int64_t i = 0; i < n1; i++) {
                int64_t pa = pick(ra[i], i, N - i), pb = pick(rb[i], i, N - i);
                ja[i] = pa; jb[i] = pb;
                int64_t x = wa[i]; wa[i] = wa[pa]; wa[pa] = x;
                int64_t y = wb[i]; wb[i] = wb[pb]; wb[pb] = y;
                ta += wa[i];
                tb += wb[i];
            }
            if (copy) {
                memcpy(wa, v, nb); memcpy(wb, v, nb);
            } else {
                for (int64_t i = n1 - 1; i >= 0; i--) {
                    int64_t x = wa[i]; wa[i] = wa[ja[i]]; wa[ja[i]] = x;
                    int64_t y = wb[i]; wb[i] = wb[jb[i]]; wb[jb[i]] = y;
                }
            }
            s_out[done + row] = (double)(ta >> shift);     /* floor: exact for negative sums */
            s_out[done + row + 1] = (double)(tb >> shift);
            if (u_out) { u_out[done + row] = ta & low; u_out[done + row + 1] = tb & low; }
        }
        for (; row < rows; row++) {
            int64_t t = int_subset_draw(wa, v, N, n1, r32 + row * 2 * per_row, ja, copy);
            s_out[done + row] = (double)(t >> shift);
            if (u_out) u_out[done + row] = t & low;
        }
    }
    state[0] = (uint64_t)(st >> 64); state[1] = (uint64_t)st;
    free(wa); free(wb); free(ja); free(jb); free(raw);
    return 0;
}
#endif

/* w = moving after the n - 1 Fisher-Yates steps driven by rr */
static inline void shuffle(double *w, const double *moving, int64_t n, const uint32_t *rr) {
    memcpy(w, moving, sizeof(double) * (size_t)n);
    for (int64_t i = 0; i + 1 < n; i++) {
        int64_t j = pick(rr[i], i, n - i);
        double t = w[i]; w[i] = w[j]; w[j] = t;
    }
}

/* Full shuffles (association): sum_i fixed[i] * moving[pi(i)] for the Fisher-Yates shuffle pi
 * of each row (n - 1 steps). */
EXPORT int permq_shuffled_dots(const double *moving, const double *fixed, int64_t n,
                               const uint32_t *r, int64_t stride, int64_t size, double *out) {
    double *w = malloc(sizeof(double) * (size_t)n);
    if (!w) return -1;
    for (int64_t row = 0; row < size; row++) {
        const uint32_t *rr = r + row * stride;
        shuffle(w, moving, n, rr);
        double s = 0.0;
        for (int64_t i = 0; i < n; i++) s += fixed[i] * w[i];
        out[row] = s;
    }
    free(w);
    return 0;
}

/* Sign flips: bit i of a row (bit i % 64 of word i / 64) set gives item i a positive sign.
 * out1 = sum of w1 over the set bits; with w2 given, out2 = sum of w2 over them and count =
 * how many bits are set. */
EXPORT int permq_flip_sums(const double *w1, const double *w2, int64_t n, const uint64_t *bits,
                           int64_t stride, int64_t size, double *out1, double *out2,
                           int64_t *count) {
    for (int64_t row = 0; row < size; row++) {
        const uint64_t *b = bits + row * stride;
        double s1 = 0.0, s2 = 0.0;
        int64_t k = 0;
        for (int64_t i = 0; i < n; i++) {
            if ((b[i >> 6] >> (i & 63)) & 1u) {
                s1 += w1[i];
                if (w2) { s2 += w2[i]; k += 1; }
            }
        }
        out1[row] = s1;
        if (w2) { out2[row] = s2; count[row] = k; }
    }
    return 0;
}

/* Three or more groups: a random assignment of the N scores to groups of the given sizes, by a
 * partial Fisher-Yates shuffle of the first N - (last group's size) places (undone after each
 * draw); group g holds places start_g .. start_g + size_g - 1. out is (size, k): each group's
 * score sum, place by place. */
EXPORT int permq_group_sums(const double *a, int64_t N, const int64_t *sizes, int64_t k,
                            const uint32_t *r, int64_t stride, int64_t size, double *out) {
    int64_t m = N - sizes[k - 1];
    double *w = malloc(sizeof(double) * (size_t)N);
    int64_t *js = malloc(sizeof(int64_t) * (size_t)(m > 0 ? m : 1));
    if (!w || !js) { free(w); free(js); return -1; }
    memcpy(w, a, sizeof(double) * (size_t)N);
    for (int64_t row = 0; row < size; row++) {
        const uint32_t *rr = r + row * stride;
        for (int64_t i = 0; i < m; i++) {
            int64_t j = pick(rr[i], i, N - i);
            js[i] = j;
            double t = w[i]; w[i] = w[j]; w[j] = t;
        }
        int64_t place = 0;
        for (int64_t g = 0; g < k; g++) {
            double s = 0.0;
            for (int64_t c = 0; c < sizes[g]; c++) s += w[place++];
            out[row * k + g] = s;
        }
        for (int64_t i = m - 1; i >= 0; i--) {
            int64_t j = js[i];
            double t = w[i]; w[i] = w[j]; w[j] = t;
        }
    }
    free(w); free(js);
    return 0;
}

/* Kendall's S of each shuffled pairing, in O(n log n) (Knight 1966): the moving values are
 * shuffled as in permq_shuffled_dots and paired with the fixed ones; `order` sorts the fixed
 * values, `tie_start` marks (1) the first place of each run of tied fixed values in that
 * order. With the pairs sorted by the fixed value and, within its ties, by the moving one,
 * every strict inversion of the moving values is a discordant pair, and
 *     S = n0 - n1 - n2 + n3 - 2 * discordant,
 * n0 = n(n-1)/2, n1 / n2 = pairs tied in the fixed / moving values (given), n3 = pairs tied
 * in both (counted here). */
static int64_t merge_count(double *v, double *buf, int64_t n) {
    int64_t inversions = 0;
    for (int64_t width = 1; width < n; width *= 2) {
        for (int64_t lo = 0; lo < n - width; lo += 2 * width) {
            int64_t mid = lo + width, hi = lo + 2 * width < n ? lo + 2 * width : n;
            int64_t i = lo, j = mid, o = lo;
            while (i < mid && j < hi) {
                if (v[i] <= v[j]) buf[o++] = v[i++];
                else { inversions += mid - i; buf[o++] = v[j++]; }
            }
            while (i < mid) buf[o++] = v[i++];
            while (j < hi) buf[o++] = v[j++];
            memcpy(v + lo, buf + lo, sizeof(double) * (size_t)(hi - lo));
        }
    }
    return inversions;
}

static void insertion_sort(double *v, int64_t n) {
    for (int64_t i = 1; i < n; i++) {
        double x = v[i];
        int64_t j = i - 1;
        while (j >= 0 && v[j] > x) { v[j + 1] = v[j]; j--; }
        v[j + 1] = x;
    }
}

static int cmp_double(const void *p, const void *q) {
    double a = *(const double *)p, b = *(const double *)q;
    return (a > b) - (a < b);
}

EXPORT int permq_kendall_s(const double *moving, const int64_t *order, const uint8_t *tie_start,
                           int64_t n, int64_t n1, int64_t n2, const uint32_t *r, int64_t stride,
                           int64_t size, double *out) {
    double *w = malloc(sizeof(double) * (size_t)n);
    double *z = malloc(sizeof(double) * (size_t)n);
    double *buf = malloc(sizeof(double) * (size_t)n);
    if (!w || !z || !buf) { free(w); free(z); free(buf); return -1; }
    int ties = 0;
    for (int64_t i = 1; i < n; i++) ties |= !tie_start[i];
    int64_t n0 = n * (n - 1) / 2;
    for (int64_t row = 0; row < size; row++) {
        const uint32_t *rr = r + row * stride;
        shuffle(w, moving, n, rr);
        for (int64_t i = 0; i < n; i++) z[i] = w[order[i]];
        int64_t n3 = 0;
        if (ties) {                      /* sort within runs of tied fixed values; count n3 */
            int64_t start = 0;
            for (int64_t i = 1; i <= n; i++) {
                if (i == n || tie_start[i]) {
                    int64_t len = i - start;
                    if (len > 1) {
                        if (len <= 32) insertion_sort(z + start, len);
                        else qsort(z + start, (size_t)len, sizeof(double), cmp_double);
                        int64_t run = 1;
                        for (int64_t c = start + 1; c <= i; c++) {
                            if (c < i && z[c] == z[c - 1]) run++;
                            else { n3 += run * (run - 1) / 2; run = 1; }
                        }
                    }
                    start = i;
                }
            }
        }
        int64_t discordant = merge_count(z, buf, n);
        out[row] = (double)(n0 - n1 - n2 + n3 - 2 * discordant);
    }
    free(w); free(z); free(buf);
    return 0;
}
