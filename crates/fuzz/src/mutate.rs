//! Byte-level mutations of an input, optionally splicing in another corpus entry.

use rand::Rng;
use rand::seq::IndexedRandom;

const TOKENS: [&[u8]; 16] = [
    b"nan",
    b"inf",
    b"-1",
    b"0",
    b"1e308",
    b"4294967296",
    b"\\\n",
    b"#",
    b"\r\n",
    b"/",
    b"//",
    b"\"",
    b"{",
    b"]",
    b"\xEF\xBB\xBF",
    b"\x00",
];

/// `input` with a few random edits: bit flips, inserted tokens or bytes, removed or repeated
/// ranges, a splice of `other`. The result is at most `max_len` bytes.
pub fn mutate(rng: &mut impl Rng, input: &[u8], other: &[u8], max_len: usize) -> Vec<u8> {
    let mut data = input.to_vec();
    let edits = rng.random_range(1..=4);
    for _ in 0..edits {
        let len = data.len();
        match rng.random_range(0..7) {
            0 if len > 0 => {
                let i = rng.random_range(0..len);
                data[i] ^= 1 << rng.random_range(0..8);
            }
            1 => {
                let i = rng.random_range(0..=len);
                let token = TOKENS.choose(rng).copied().unwrap_or(b"0");
                data.splice(i..i, token.iter().copied());
            }
            2 if len > 0 => {
                let a = rng.random_range(0..len);
                let b = (a + rng.random_range(1..=64)).min(len);
                data.drain(a..b);
            }
            3 if len > 0 => {
                let a = rng.random_range(0..len);
                let b = (a + rng.random_range(1..=256)).min(len);
                let chunk = data[a..b].to_vec();
                let times = rng.random_range(1..=8);
                for _ in 0..times {
                    data.splice(b..b, chunk.iter().copied());
                }
            }
            4 if !other.is_empty() => {
                let a = rng.random_range(0..other.len());
                let b = (a + rng.random_range(1..=512)).min(other.len());
                let i = rng.random_range(0..=len);
                data.splice(i..i, other[a..b].iter().copied());
            }
            5 => {
                let i = rng.random_range(0..=len);
                let byte: u8 = rng.random();
                data.insert(i, byte);
            }
            _ if len > 0 => {
                // Replace a digit run by another number.
                let i = rng.random_range(0..len);
                if data[i].is_ascii_digit() {
                    let mut j = i;
                    while j < len && data[j].is_ascii_digit() {
                        j += 1;
                    }
                    let n: u64 = rng.random();
                    data.splice(i..j, n.to_string().into_bytes());
                }
            }
            _ => {}
        }
    }
    data.truncate(max_len);
    data
}
