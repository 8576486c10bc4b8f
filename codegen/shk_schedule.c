/* shk_schedule.c - rope-length schedule lookup. Contracts in shk_schedule.h. */
#include "shk_schedule.h"

#include <stddef.h>

shk_status_t shk_schedule_check(const shk_schedule_t *sched)
{
    uint32_t k;
    if (sched == NULL) {
        return SHK_ERR_ARGUMENT;
    }
    if (sched->n_rows == 0u || sched->length_min > sched->length_max) {
        return SHK_ERR_TABLE;
    }
    if (sched->n_rows > 1u && sched->thresholds == NULL) {
        return SHK_ERR_TABLE;
    }
    for (k = 0u; k + 1u < sched->n_rows; ++k) {
        uint32_t t = sched->thresholds[k];
        if (t <= sched->length_min || t > sched->length_max) {
            return SHK_ERR_TABLE;
        }
        if (k > 0u && t <= sched->thresholds[k - 1u]) {
            return SHK_ERR_TABLE;
        }
    }
    return SHK_OK;
}

shk_status_t shk_schedule_lookup(const shk_schedule_t *sched, uint32_t length, uint32_t *row)
{
    shk_status_t status = SHK_OK;
    uint32_t lo;
    uint32_t hi;
    uint32_t iter;
    if (sched == NULL || row == NULL) {
        return SHK_ERR_ARGUMENT;
    }
    if (length < sched->length_min) {
        *row = 0u;
        return SHK_CLAMPED_LOW;
    }
    if (length > sched->length_max) {
        length = sched->length_max;
        status = SHK_CLAMPED_HIGH;
    }
    /* Invariant: thresholds[0 .. lo-1] <= length < thresholds[hi .. n-2].
     * The interval halves each pass, so 32 passes cover any uint32_t row count. */
    lo = 0u;
    hi = (sched->n_rows > 0u) ? sched->n_rows - 1u : 0u;
    for (iter = 0u; iter < 32u && lo < hi; ++iter) {
        uint32_t mid = lo + (hi - lo) / 2u;
        if (sched->thresholds[mid] <= length) {
            lo = mid + 1u;
        } else {
            hi = mid;
        }
    }
    *row = lo;
    return status;
}
