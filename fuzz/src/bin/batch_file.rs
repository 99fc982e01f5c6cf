//! Fuzz target: arbitrary bytes as a library file (read, size every gate, write CSV).
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        widthwise_fuzz::batch_file(text);
    }
});
