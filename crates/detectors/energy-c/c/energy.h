/*
 * energy.h - frame energy (mean of x^2) of a sample stream, firmware style.
 *
 * C99, single-precision float, no malloc, no libm calls: the state is one
 * fixed-size struct that the caller owns (a static in firmware, a buffer of
 * energy_state_size() bytes in a host program).
 *
 * Per sample call energy_push(); every `hop` samples, once `frame_len`
 * samples have been seen, it writes the mean of x^2 over the last
 * `frame_len` samples to *score and returns 1. Non-finite samples count as 0.
 */
#ifndef ECHOBENCH_ENERGY_H
#define ECHOBENCH_ENERGY_H

#include <stddef.h>
#include <stdint.h>

/* Largest frame the state struct holds (sets its RAM: 4 bytes per sample). */
#define ENERGY_MAX_FRAME 2048u

typedef struct {
    float squares[ENERGY_MAX_FRAME]; /* ring of the last frame_len x^2 values */
    uint32_t frame_len;              /* N, samples per frame */
    uint32_t hop;                    /* samples between frame ends */
    uint32_t head;                   /* next ring slot to write */
    uint32_t filled;                 /* valid ring slots, up to frame_len */
    uint32_t countdown;              /* samples until the next frame end */
} energy_state;

/* Error codes of energy_init. */
#define ENERGY_OK 0
#define ENERGY_BAD_FRAME (-1) /* frame_len is 0 or above ENERGY_MAX_FRAME */
#define ENERGY_BAD_HOP (-2)   /* hop is 0 */

/* Sets up a state for frames of frame_len samples every hop samples. */
int energy_init(energy_state *state, uint32_t frame_len, uint32_t hop);

/* Forgets all samples, keeping frame_len and hop. */
void energy_reset(energy_state *state);

/* Consumes one sample; returns 1 and writes *score when a frame ends, else 0. */
int energy_push(energy_state *state, float sample, float *score);

/* Facts a host needs to hold the state and to trust the arithmetic. */
size_t energy_state_size(void);
size_t energy_state_align(void);
uint32_t energy_max_frame(void);
int energy_flt_eval_method(void);

#endif /* ECHOBENCH_ENERGY_H */
