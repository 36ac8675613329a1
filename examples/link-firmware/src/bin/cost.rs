//! Instructions per record of the link encoder on the Cortex-M0, timed
//! with SysTick under `qemu-system-arm -icount shift=0` (`run.sh cost`):
//! every guest instruction then advances the virtual clock by 1 ns, so
//! SysTick ticks convert to instructions by a factor measured here with
//! `cortex_m::asm::delay` (n + 1 iterations of a two-instruction loop),
//! as examples/firmware's `cost` does. The encoder writes into a sink that
//! takes every byte and keeps none, so the figure is the encoder's own
//! (body, CRC-32, stuffing), not the UART's. Each path runs `ITERATIONS`
//! times over inputs hidden behind `black_box`; the empty loop is
//! subtracted. Also printed: the encoder's size and the program's peak
//! stack (the stack is painted before `main`, cortex-m-rt `paint-stack`).
#![no_std]
#![no_main]

#[path = "../common.rs"]
mod common;

use common::{exit, Line};
use core::fmt::Write as _;
use core::hint::black_box;
use cortex_m::peripheral::{syst::SystClkSource, SYST};
use cortex_m_rt::entry;
use cortex_m_semihosting::hio;
use lc_core::counting::CountPair;
use lc_core::image::ReaderKind;
use lc_core::link::{Counts, Encoder, Hello, ReadingRecord, Record, Thermal};
use lc_core::reader::Status;
use lc_core::temperature::CentiCelsius;

const ITERATIONS: u32 = 1024;
const SYST_MASK: u32 = 0x00FF_FFFF;

/// A sink that takes everything and keeps a byte sum.
struct Drain(u32);

impl embedded_io::ErrorType for Drain {
    type Error = core::convert::Infallible;
}

impl embedded_io::Write for Drain {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        self.0 = self.0.wrapping_add(buf.len() as u32);
        Ok(buf.len())
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

fn ticks_between(start: u32, end: u32) -> u32 {
    start.wrapping_sub(end) & SYST_MASK
}

#[inline(never)]
fn time(records: &[Record; 4], enc: &mut Encoder, sink: &mut Drain, work: bool) -> u32 {
    let start = SYST::get_current();
    for i in 0..ITERATIONS {
        let r = black_box(&records[(i & 3) as usize]);
        if work {
            let _ = black_box(enc.send(sink, r));
        }
    }
    ticks_between(start, SYST::get_current())
}

#[inline(never)]
fn time_delay(n: u32) -> u32 {
    let start = SYST::get_current();
    cortex_m::asm::delay(black_box(n));
    ticks_between(start, SYST::get_current())
}

#[allow(unsafe_code)]
fn stack_peak_bytes() -> u32 {
    extern "C" {
        static _stack_start: u32;
        static _stack_end: u32;
    }
    // SAFETY: only the linker symbols' addresses are taken; the words
    // between them are the (mapped) stack region, read volatile.
    unsafe {
        let top = core::ptr::addr_of!(_stack_start) as usize;
        let mut at = core::ptr::addr_of!(_stack_end) as usize;
        while at < top && core::ptr::read_volatile(at as *const u32) == 0xCCCC_CCCC {
            at += 4;
        }
        (top - at) as u32
    }
}

#[entry]
fn main() -> ! {
    let Some(mut core) = cortex_m::Peripherals::take() else {
        exit(false)
    };
    core.SYST.set_clock_source(SystClkSource::Core);
    core.SYST.set_reload(SYST_MASK);
    core.SYST.clear_current();
    core.SYST.enable_counter();

    // Instructions per tick: two delays, their difference is 2·10⁶
    // instructions.
    let short = time_delay(100_000);
    let long = time_delay(1_100_000);
    let per_tick_num = 2_000_000u64;
    let per_tick_den = u64::from(long - short);

    let counts = |i: u32| {
        Record::Counts(Counts {
            channel: (i & 1) as u8,
            pair: CountPair::new(16_384, 124_000 + i * 997),
            companion: None,
            thermal: Thermal::Celsius(CentiCelsius(2_350 + i as i32)),
            ring_count: None,
        })
    };
    let reading = |i: u32| {
        Record::Reading(ReadingRecord {
            channel: (i & 1) as u8,
            kind: ReaderKind::Proximity,
            status: Status::Ok,
            of_sequence: i as u16,
            value: 1_500 + i as i32,
            secondary: None,
            curve_input_q40: -70_015_435_360 + i64::from(i),
        })
    };
    let hello = |i: u32| Record::Hello(Hello::new(b"DEMO-01-0007", 0xA6FE_B084 ^ i));
    let paths: [(&str, [Record; 4]); 3] = [
        ("count pair", [counts(0), counts(1), counts(2), counts(3)]),
        ("reading", [reading(0), reading(1), reading(2), reading(3)]),
        ("hello", [hello(0), hello(1), hello(2), hello(3)]),
    ];
    let mut enc = Encoder::new();
    let mut sink = Drain(0);
    let Ok(mut out) = hio::hstdout() else {
        exit(false)
    };
    for (name, records) in &paths {
        let records = black_box(records);
        let empty = time(records, &mut enc, &mut sink, false);
        let full = time(records, &mut enc, &mut sink, true);
        let net = u64::from(full.saturating_sub(empty));
        // Tenths of an instruction per record, rounded.
        let tenths =
            (net * per_tick_num * 10 * 2 / per_tick_den / u64::from(ITERATIONS)).div_ceil(2);
        let mut l = Line::new();
        let _ = writeln!(
            l,
            "link encoder, {name} record: {}.{} instructions",
            tenths / 10,
            tenths % 10
        );
        let _ = out.write_all(l.as_bytes());
    }
    let mut l = Line::new();
    let _ = writeln!(
        l,
        "Encoder {} bytes; peak stack of this program {} bytes; {} bytes sent",
        core::mem::size_of::<Encoder>(),
        stack_peak_bytes(),
        black_box(sink.0)
    );
    let _ = out.write_all(l.as_bytes());
    exit(true)
}
