/*
 * shk_fixed.h - stillhook fixed-point runtime: version, status codes, Q-format helpers.
 *
 * Portable C99. Integer arithmetic only, <stdint.h> types only, no malloc, no recursion.
 *
 * Q formats
 *   Q15: int16_t, value = n / 2^15, range [-1, 1 - 2^-15].
 *   Q31: int32_t, value = n / 2^31, range [-1, 1 - 2^-31].
 *
 * Rounding (every place a result is narrowed): round to nearest, ties toward +infinity,
 *   r = floor((acc + 2^(s-1)) / 2^s). The floor division is done without right-shifting a
 *   negative value (implementation-defined in C99 6.5.7), so results are the same on every
 *   compiler. The shaper does not drop what rounding removes: it carries the remainder into the
 *   next cycle (shk_shaper.h).
 * Saturation: a narrowed result outside the target type's range is clamped to its minimum or
 *   maximum (no wrap-around anywhere).
 *
 * Version 2: the shaper became the scatter form with an accumulator ring (int32_t / int64_t
 * slots instead of a history of samples); tables of version 1 do not fit it.
 *
 * The Python reference models (stillhook.fixedpoint, stillhook.fixedpoint_shaper) follow these
 * definitions bit for bit.
 */
#ifndef SHK_FIXED_H
#define SHK_FIXED_H

#include <stdint.h>

/* Runtime interface version. Emitted tables check it with #error on mismatch. */
#define SHK_RUNTIME_VERSION 2

/* Compile-time assertion usable in C99 (a negative array size fails to compile). */
#define SHK_STATIC_ASSERT(cond, name) typedef char shk_static_assert_##name[(cond) ? 1 : -1]

/* Status codes (bit flags). Every function that can clamp or refuse returns one. */
typedef uint32_t shk_status_t;
#define SHK_OK            0x0u /* normal */
#define SHK_CLAMPED_LOW   0x1u /* rope length below the designed envelope: first row used */
#define SHK_CLAMPED_HIGH  0x2u /* rope length above the designed envelope: last row used */
#define SHK_ERR_ARGUMENT  0x4u /* null pointer, buffer too small, row out of range */
#define SHK_ERR_TABLE     0x8u /* table fails its consistency checks */

SHK_STATIC_ASSERT(sizeof(int16_t) == 2u, int16_is_2_bytes);
SHK_STATIC_ASSERT(sizeof(int32_t) == 4u, int32_is_4_bytes);
SHK_STATIC_ASSERT(sizeof(int64_t) == 8u, int64_is_8_bytes);

/* floor(v / 2^s), 0 <= s <= 62, exact for every int64_t v.
 * For v < 0: floor(v / 2^s) = -floor((-v - 1) / 2^s) - 1, with -v - 1 >= 0. */
static inline int64_t shk_floor_shift64(int64_t v, uint32_t s)
{
    if (v >= 0) {
        return (int64_t)((uint64_t)v >> s);
    }
    return -(int64_t)((uint64_t)(-(v + 1)) >> s) - 1;
}

/* round(v / 2^s), ties toward +infinity, 1 <= s <= 62. Requires v + 2^(s-1) to fit int64_t;
 * every caller keeps |v| < 2^62. */
static inline int64_t shk_round_shift64(int64_t v, uint32_t s)
{
    return shk_floor_shift64(v + ((int64_t)1 << (s - 1u)), s);
}

/* floor(v / 2^s), 1 <= s <= 31, exact for every int32_t v, without shifting a negative value:
 * v + 2^31 is in [0, 2^32) as a uint32_t, and 2^31 / 2^s is a whole number. */
static inline int32_t shk_floor_shift32(int32_t v, uint32_t s)
{
    uint32_t u = (uint32_t)v + UINT32_C(0x80000000);
    return (int32_t)(u >> s) - (int32_t)(UINT32_C(0x80000000) >> s);
}

/* Clamp to the int16_t range. */
static inline int16_t shk_sat16(int64_t v)
{
    if (v > (int64_t)INT16_MAX) {
        return INT16_MAX;
    }
    if (v < (int64_t)INT16_MIN) {
        return INT16_MIN;
    }
    return (int16_t)v;
}

/* Clamp to the int32_t range. */
static inline int32_t shk_sat32(int64_t v)
{
    if (v > (int64_t)INT32_MAX) {
        return INT32_MAX;
    }
    if (v < (int64_t)INT32_MIN) {
        return INT32_MIN;
    }
    return (int32_t)v;
}

/* Split a Q31 sample so 32 x 33-bit products stay inside int64_t:
 * v = hi * 2^16 + lo, hi = floor(v / 2^16) in [-2^15, 2^15), lo in [0, 2^16). */
static inline int32_t shk_split_hi(int32_t v)
{
    return (int32_t)shk_floor_shift64((int64_t)v, 16u);
}

static inline int32_t shk_split_lo(int32_t v)
{
    return (int32_t)((uint32_t)v & 0xFFFFu);
}

/* Finish a split accumulation: the exact sum is acc_hi * 2^16 + acc_lo; return
 * sat32(round(sum / 2^s)) for 16 <= s <= 31. Since 0 <= r < 2^16 cannot carry past the
 * 2^16 boundary, floor((M * 2^16 + r) / 2^s) = floor(M / 2^(s-16)) with
 * M = acc_hi + floor((acc_lo + 2^(s-1)) / 2^16). Requires |acc_hi|, |acc_lo| < 2^61. */
static inline int32_t shk_finish_split(int64_t acc_hi, int64_t acc_lo, uint32_t s)
{
    int64_t m = acc_hi + shk_floor_shift64(acc_lo + ((int64_t)1 << (s - 1u)), 16u);
    return shk_sat32(shk_floor_shift64(m, s - 16u));
}

#endif /* SHK_FIXED_H */
