/* The inputs each example firmware reads, in place of its timer captures,
   ADC and ring-down comparator: the same as the Rust unit firmwares'
   (examples/unit-firmware/src/script.rs; script.c is generated from it). */
#ifndef LC_EXAMPLE_SCRIPT_H
#define LC_EXAMPLE_SCRIPT_H

#include <stddef.h>

#include "lc_core.h"

extern const lc_input_t script_proximity[];
extern const size_t script_proximity_len;
extern const lc_input_t script_level[];
extern const size_t script_level_len;
extern const lc_input_t script_metal[];
extern const size_t script_metal_len;

#endif
