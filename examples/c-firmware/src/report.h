/* One text line per reading, the line format of the Rust unit firmwares
   (examples/unit-firmware/src/report.rs), written as they write it:
   without printf, without a line buffer (RAM), numbers digit by digit
   without division, the status names in one string.

     reading <i> value <v> secondary <v|-> shift <Q23.40 as 16 hex digits> status <name>

   The host test (tests/c_firmware.rs) compares the lines with the Rust
   firmware's and the host's, byte for byte. */
#ifndef LC_EXAMPLE_REPORT_H
#define LC_EXAMPLE_REPORT_H

#include <stddef.h>
#include <stdint.h>

#include "board.h"
#include "lc_core.h"

/* Writes a string literal (its length known at compile time). */
#define PUT(literal) host_write((literal), sizeof(literal) - 1u)

/* Writes the `len` bytes of `label`, then '-' when `negative`, then
   `magnitude` in decimal (by subtracting powers of ten: no division
   routine linked): one call for a line's label and its number. */
void put_decimal(const char *label, size_t len, int negative, uint32_t magnitude);
/* put_decimal with a string literal as the label. */
#define PUT_DECIMAL(literal, negative, magnitude)                                              \
  put_decimal((literal), sizeof(literal) - 1u, (negative), (magnitude))

/* The line of reading number `index`: its value, its secondary value
   when `has_secondary`, the raw Q23.40 value it came from (as the 16 hex
   digits of its two's complement), its status's short name and the
   line's end. The names: "ok", "below-range", "above-range",
   "no-target", and per sensor fault "fault-counts", "fault-companion",
   "fault-shift", "fault-ratio", "fault-reference", "fault-reference-low",
   "fault-frozen", "fault-temperature-domain",
   "fault-temperature-missing", "fault-out-of-reach". */
void put_reading(uint32_t index, int32_t value, int has_secondary, int32_t secondary,
                 int64_t q40, lc_status_t status, lc_fault_t fault);

#endif
