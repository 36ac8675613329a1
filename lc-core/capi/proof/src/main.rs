//! Panic-freedom proof of lc-core's C API (`lc-core/capi`): every entry
//! point called with arguments the optimiser cannot see (each passes
//! through `core::hint::black_box`), linked with `panic-never` (the
//! library's `panic-never` feature), whose
//! panic handler refers to a symbol that does not exist: the link fails
//! if any panic path behind the entry points survives optimisation.
//! Built for the Cortex-M0 and Cortex-M4F, without and with overflow
//! checks (`--profile release-checked`), by scripts/check.sh:
//!
//! ```sh
//! cd lc-core/capi/proof
//! cargo build --release --target thumbv6m-none-eabi
//! cargo build --profile release-checked --target thumbv7em-none-eabihf
//! ```
//!
//! Entry points: `lc_image_validate` (and its one-kind variants), `lc_image_info`,
//! `lc_proximity_reader_init` / `lc_proximity_read`, `lc_level_reader_init`
//! / `lc_level_read`, `lc_metal_reader_init` / `lc_metal_read`, the
//! one-call `lc_proximity_reader_open`, `lc_level_reader_open` and
//! `lc_metal_reader_open`,
//! `lc_reader_init` / `lc_reader_read`, `lc_check_layout`. It is only
//! linked, never run: the arguments are opaque, not meaningful.
#![no_std]
#![no_main]

use core::hint::black_box;
use core::mem::MaybeUninit;
use cortex_m_rt::entry;
use lc_core_capi::*;

/// Some bytes for the image (their content is hidden from the optimiser).
static BYTES: [u32; 8] = [0; 8];

#[entry]
fn main() -> ! {
    let mut image = MaybeUninit::<lc_image_t>::uninit();
    let mut info = MaybeUninit::<lc_image_info_t>::uninit();
    let mut prox = MaybeUninit::<lc_proximity_reader_t>::uninit();
    let mut level = MaybeUninit::<lc_level_reader_t>::uninit();
    let mut metal = MaybeUninit::<lc_metal_reader_t>::uninit();
    let mut any = MaybeUninit::<lc_reader_t>::uninit();
    let mut pr = MaybeUninit::<lc_proximity_reading_t>::uninit();
    let mut lr = MaybeUninit::<lc_level_reading_t>::uninit();
    let mut mr = MaybeUninit::<lc_metal_reading_t>::uninit();
    let mut r = MaybeUninit::<lc_reading_t>::uninit();
    let mut layout = MaybeUninit::<lc_layout_t>::uninit();
    let input = lc_input_t::default();
    let image = black_box(image.as_mut_ptr());
    let input = black_box(&input as *const lc_input_t);
    let mut sum = 0u32;
    // SAFETY: every pointer is valid storage of its type (the values are
    // hidden from the optimiser, so every path behind the entry points is
    // linked).
    unsafe {
        let bytes = black_box(BYTES.as_ptr().cast::<u8>());
        sum ^= lc_image_validate(image, bytes, black_box(32)) as u32;
        sum ^= lc_image_validate_proximity(image, bytes, black_box(32)) as u32;
        sum ^= lc_image_validate_level(image, bytes, black_box(32)) as u32;
        sum ^= lc_image_validate_metal(image, bytes, black_box(32)) as u32;
        sum ^= lc_image_info(image, black_box(info.as_mut_ptr())) as u32;
        let prox = black_box(prox.as_mut_ptr());
        let level = black_box(level.as_mut_ptr());
        let metal = black_box(metal.as_mut_ptr());
        let any = black_box(any.as_mut_ptr());
        sum ^= lc_proximity_reader_init(prox, image) as u32;
        sum ^= lc_level_reader_init(level, image) as u32;
        sum ^= lc_metal_reader_init(metal, image) as u32;
        sum ^= lc_reader_init(any, image) as u32;
        sum ^= lc_proximity_reader_open(prox, bytes, black_box(32)) as u32;
        sum ^= lc_level_reader_open(level, bytes, black_box(32)) as u32;
        sum ^= lc_metal_reader_open(metal, bytes, black_box(32)) as u32;
        for _ in 0..black_box(4) {
            sum ^= lc_proximity_read(prox, input, black_box(pr.as_mut_ptr())) as u32;
            sum ^= lc_level_read(level, input, black_box(lr.as_mut_ptr())) as u32;
            sum ^= lc_metal_read(metal, input, black_box(mr.as_mut_ptr())) as u32;
            sum ^= lc_reader_read(any, input, black_box(r.as_mut_ptr())) as u32;
        }
        sum ^= lc_check_layout(
            black_box(layout.as_mut_ptr()),
            black_box(1),
            black_box(2),
            black_box(3),
            black_box(4),
            black_box(5),
        ) as u32;
    }
    black_box(sum);
    loop {
        core::hint::spin_loop();
    }
}
