//! Byte formats between a microcontroller and leadline. Pure functions: no I/O, no threads.
//!
//! - [`ascii`]: text lines, one frame per line (encoder here; the decoder comes with the serial source).

pub mod ascii;
