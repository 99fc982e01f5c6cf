//! Fuzz target: arbitrary bytes as a process file (read, write back, read again).
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        widthwise_fuzz::process_file(text);
    }
});
