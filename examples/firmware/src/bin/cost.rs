#![no_std]
#![no_main]
use lc_firmware as _;
#[cortex_m_rt::entry]
fn main() -> ! { lc_firmware::exit(true) }
