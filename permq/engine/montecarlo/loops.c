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
 * many chosen items came from the second group (index >= n1). */
EXPORT int permq_subset_sums(const double *a, int64_t N, int64_t n1, const uint32_t *r,
                             int64_t stride, int64_t size, double *s_out, int64_t *u_out) {
    double *w = malloc(sizeof(double) * (size_t)N);
    double *second = malloc(sizeof(double) * 2 * (size_t)N);  /* 1.0 for the second group's */
    double *second0 = second + N;                              /* ... as at the start */
    int64_t *js = malloc(sizeof(int64_t) * (size_t)(n1 > 0 ? n1 : 1));
    if (!w || !second || !js) { free(w); free(second); free(js); return -1; }
    /* back to the original order after each draw: copy it whole when that is shorter than
     * undoing the swaps (the same arrangement either way) */
    int copy = N <= 4 * n1;
    memcpy(w, a, sizeof(double) * (size_t)N);
    for (int64_t i = 0; i < N; i++) second[i] = second0[i] = i >= n1 ? 1.0 : 0.0;
    for (int64_t row = 0; row < size; row++) {
        const uint32_t *rr = r + row * stride;
        double s = 0.0, u = 0.0;
        if (!u_out) {                                       /* the sums alone */
            for (int64_t i = 0; i < n1; i++) {
                int64_t j = pick(rr[i], i, N - i);
                js[i] = j;
                double t = w[i]; w[i] = w[j]; w[j] = t;
                s += w[i];
            }
        } else {                                            /* branch-free: groups are random */
            for (int64_t i = 0; i < n1; i++) {
                int64_t j = pick(rr[i], i, N - i);
                js[i] = j;
                double t = w[i]; w[i] = w[j]; w[j] = t;
                double f = second[i]; second[i] = second[j]; second[j] = f;
                s += w[i];
                u += second[i];
            }
            u_out[row] = (int64_t)u;
        }
        s_out[row] = s;
        if (copy) {
            memcpy(w, a, sizeof(double) * (size_t)N);
            if (u_out) memcpy(second, second0, sizeof(double) * (size_t)N);
        } else {
            for (int64_t i = n1 - 1; i >= 0; i--) {
                int64_t j = js[i];
                double t = w[i]; w[i] = w[j]; w[j] = t;
                double f = second[i]; second[i] = second[j]; second[j] = f;
            }
        }
    }
    free(w); free(second); free(js);
    return 0;
}

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
