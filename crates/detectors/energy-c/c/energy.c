/*
 * energy.c - see energy.h. The energy detector's raw mode: the same framing
 * and statistic as the Rust `energy` detector with `normalise: none` and no
 * band limit, in single precision as on an MCU with a single-precision FPU.
 */
#include "energy.h"

#include <float.h>
#include <math.h>

int energy_init(energy_state *state, uint32_t frame_len, uint32_t hop)
{
    if (frame_len == 0u || frame_len > ENERGY_MAX_FRAME) {
        return ENERGY_BAD_FRAME;
    }
    if (hop == 0u) {
        return ENERGY_BAD_HOP;
    }
    state->frame_len = frame_len;
    state->hop = hop;
    energy_reset(state);
    return ENERGY_OK;
}

void energy_reset(energy_state *state)
{
    uint32_t i;
    for (i = 0u; i < ENERGY_MAX_FRAME; ++i) {
        state->squares[i] = 0.0f;
    }
    state->head = 0u;
    state->filled = 0u;
    /* The first frame ends after frame_len samples, later ones every hop. */
    state->countdown = state->frame_len;
}

int energy_push(energy_state *state, float sample, float *score)
{
    /* NaN and infinities (a glitching ADC driver) count as silence. */
    const float x = isfinite(sample) ? sample : 0.0f;
    float sum = 0.0f;
    uint32_t i;

    state->squares[state->head] = x * x;
    state->head = (state->head + 1u == state->frame_len) ? 0u : state->head + 1u;
    if (state->filled < state->frame_len) {
        state->filled += 1u;
    }
    state->countdown -= 1u;
    if (state->countdown != 0u) {
        return 0;
    }
    state->countdown = state->hop;
    if (state->filled < state->frame_len) {
        return 0;
    }
    /* A plain float loop, as firmware would write it: the rounding error is
     * at most (frame_len - 1) units of 2^-24 relative, typically sqrt(frame_len). */
    for (i = 0u; i < state->frame_len; ++i) {
        sum += state->squares[i];
    }
    *score = sum / (float)state->frame_len;
    return 1;
}

size_t energy_state_size(void)
{
    return sizeof(energy_state);
}

size_t energy_state_align(void)
{
    /* C99 has no _Alignof: the offset of a member after a char is the alignment. */
    struct probe {
        char c;
        energy_state s;
    };
    return offsetof(struct probe, s);
}

uint32_t energy_max_frame(void)
{
    return ENERGY_MAX_FRAME;
}

int energy_flt_eval_method(void)
{
    /* 0: float operations round to float each time (SSE, ARMv7-M FPv4-SP). */
    return FLT_EVAL_METHOD;
}
