/* One text line per reading, the line format of the Rust unit firmwares
   (examples/unit-firmware/src/report.rs), written as they write it:
   without printf, without a line buffer (RAM), numbers digit by digit
   without division, the status names in one string.

     reading <i> value <v> secondary <v|-> shift <Q23.40 as 16 hex digits> status <name>

   The host test (tests/c_firmware.rs) compares the lines with the Rust
   firmware's and the host's, byte for byte. */
#ifndef LC_EXAMPLE_REPORT_H
#define LC_EXAMPLE_REPORT_H

#include <stdint.h>

#include "board.h"
#include "lc_core.h"

/* Writes a string literal (its length known at compile time). */
#define PUT(literal) host_write((literal), sizeof(literal) - 1u)

/* Writes `v` in decimal (by subtracting powers of ten: no division
   routine linked). */
void put_uint(uint32_t v);
/* Writes `v` in decimal. */
void put_int(int32_t v);
/* Writes the 64 bits of `v` as 16 hex digits (two's complement). */
void put_hex64(int64_t v);

/* The line of reading number `index`: its value, its secondary value
   when `has_secondary`, the raw Q23.40 value it came from, its status
   and the line's end. */
void put_reading(uint32_t index, int32_t value, int has_secondary, int32_t secondary,
                 int64_t q40, lc_status_t status, lc_fault_t fault);

/* Writes the status's short name and the line's end: "ok",
   "below-range", "above-range", "no-target", and per sensor fault
   "fault-counts", "fault-companion", "fault-shift", "fault-ratio",
   "fault-reference", "fault-reference-low", "fault-frozen",
   "fault-temperature-domain", "fault-temperature-missing",
   "fault-out-of-reach". */
void put_status(lc_status_t status, lc_fault_t fault);

#endif
