//! Fuzz target: arbitrary bytes as a gate expression (read, size, write, verify).
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        widthwise_fuzz::expression(text);
    }
});
