/* The inputs each example firmware reads, in place of its timer captures,
   ADC and ring-down comparator: the same rows as the Rust unit firmwares'
   (examples/unit-firmware/src/script.rs; script.c is generated from it).

   Each row holds what a unit's registers give after one gate, as a real
   firmware gets it: the sensor cycles counted, the reference ticks
   captured, the NTC's temperature, the ring count. The firmware turns one
   row into an lc_input_t per reading (the *_input functions below): 8 or
   12 bytes a row in flash instead of the 24 of an lc_input_t. */
#ifndef LC_EXAMPLE_SCRIPT_H
#define LC_EXAMPLE_SCRIPT_H

#include <stddef.h>
#include <stdint.h>

#include "lc_core.h"

/* centi_c: no temperature this gate (the NTC's conversion did not
   complete). */
#define NO_TEMPERATURE INT16_MIN
/* reference_ticks: no capture of the level unit's reference electrode. */
#define NO_CAPTURE 0u
/* ring_count: no ring-down counted this gate. */
#define NO_RING_COUNT UINT16_MAX

/* One gate of a proximity unit: reference ticks, sensor cycles and the
   temperature (0.01 degC, or NO_TEMPERATURE). */
typedef struct {
  uint32_t ticks;
  uint16_t cycles;
  int16_t centi_c;
} proximity_gate_t;

/* One gate of a level unit: the probe's and the reference electrode's
   reference ticks (or NO_CAPTURE) over the same sensor cycles, and the
   temperature. */
typedef struct {
  uint32_t ticks;
  uint32_t reference_ticks;
  uint16_t cycles;
  int16_t centi_c;
} level_gate_t;

/* One gate of a metal detector: as a proximity gate, with the ring count
   of the ring-down after it (or NO_RING_COUNT). */
typedef struct {
  uint32_t ticks;
  uint16_t cycles;
  int16_t centi_c;
  uint16_t ring_count;
} metal_gate_t;

extern const proximity_gate_t script_proximity[];
extern const size_t script_proximity_len;
extern const level_gate_t script_level[];
extern const size_t script_level_len;
extern const metal_gate_t script_metal[];
extern const size_t script_metal_len;

/* The count pair and the temperature of a gate, what every unit reads,
   into `in` (every field written: no memset linked). */
static inline void gate_input(uint32_t cycles, uint32_t ticks, int16_t centi_c, lc_input_t *in) {
  in->pair.cycles = cycles;
  in->pair.ticks = ticks;
  in->companion.cycles = 0u;
  in->companion.ticks = 0u;
  /* Read only with LC_INPUT_TEMPERATURE (without it, NO_TEMPERATURE
     stays here unread). */
  in->temperature_centi_c = centi_c;
  in->ring_count = 0u;
  in->flags = centi_c == NO_TEMPERATURE ? 0u : LC_INPUT_TEMPERATURE;
}

/* The reader's input for a proximity gate, into `in`. */
static inline void proximity_input(const proximity_gate_t *g, lc_input_t *in) {
  gate_input(g->cycles, g->ticks, g->centi_c, in);
}

/* The reader's input for a level gate, into `in`. */
static inline void level_input(const level_gate_t *g, lc_input_t *in) {
  gate_input(g->cycles, g->ticks, g->centi_c, in);
  if (g->reference_ticks != NO_CAPTURE) {
    in->companion.cycles = g->cycles;
    in->companion.ticks = g->reference_ticks;
    in->flags |= LC_INPUT_COMPANION;
  }
}

/* The reader's input for a metal gate, into `in`. */
static inline void metal_input(const metal_gate_t *g, lc_input_t *in) {
  gate_input(g->cycles, g->ticks, g->centi_c, in);
  if (g->ring_count != NO_RING_COUNT) {
    in->ring_count = g->ring_count;
    in->flags |= LC_INPUT_RING_COUNT;
  }
}

#endif
