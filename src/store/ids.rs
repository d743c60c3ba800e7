//! Keys: UUIDv7 made from the time and a deterministic generator (seeded from the clock,
//! or fixed by tests and the demo).

/// Deterministic generator for the random part of UUIDv7 keys (SplitMix64).
///
/// In monotonic mode (bulk imports, which stamp every key with the same millisecond) keys
/// made within one millisecond ascend: the 74 random bits of the previous key plus a random
/// step of 1 to 2^32 (RFC 9562 section 6.2, method 2, "monotonic random"). New rows then go
/// to the end of the key indexes instead of to random places in them.
#[derive(Debug, Clone)]
pub(crate) struct IdGen {
    state: u64,
    monotonic: bool,
    /// (millisecond, 74 random bits) of the last key made in monotonic mode
    last: Option<(u64, u128)>,
}

const RAND_BITS: u32 = 74;

impl IdGen {
    pub(crate) fn new(seed: u64) -> IdGen {
        IdGen {
            state: seed,
            monotonic: false,
            last: None,
        }
    }
    pub(crate) fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Switch monotonic mode on or off (see the type's description).
    pub(crate) fn set_monotonic(&mut self, on: bool) {
        self.monotonic = on;
        self.last = None;
    }
    /// A UUIDv7 for the given time in milliseconds since 1970.
    pub(crate) fn uuid_v7(&mut self, millis: i64) -> String {
        let a = self.next_u64().to_le_bytes();
        let b = self.next_u64().to_le_bytes();
        let mut rnd = [0u8; 10];
        rnd[..8].copy_from_slice(&a);
        rnd[8..].copy_from_slice(&b[..2]);
        let mut ms = millis.max(0) as u64;
        if self.monotonic {
            let fresh = u128::from_le_bytes({
                let mut x = [0u8; 16];
                x[..10].copy_from_slice(&rnd);
                x
            }) & ((1u128 << RAND_BITS) - 1);
            let r = match self.last {
                Some((last_ms, last_r)) if last_ms >= ms => {
                    let step = 1 + u128::from(u32::from_le_bytes([a[0], a[1], a[2], a[3]]));
                    let r = last_r + step;
                    if r >> RAND_BITS == 0 {
                        ms = last_ms;
                        r
                    } else {
                        // the random field is used up: move on to the next millisecond
                        ms = last_ms + 1;
                        fresh >> 1
                    }
                }
                _ => fresh >> 1, // start in the lower half: room to count up
            };
            self.last = Some((ms, r));
            // lay the 74 bits out where the builder takes them: 4 bits of byte 0, byte 1,
            // 6 bits of byte 2, bytes 3..9
            rnd[0] = ((r >> 70) & 0x0F) as u8;
            rnd[1] = ((r >> 62) & 0xFF) as u8;
            rnd[2] = ((r >> 56) & 0x3F) as u8;
            for (k, byte) in rnd[3..].iter_mut().enumerate() {
                *byte = ((r >> (8 * (6 - k))) & 0xFF) as u8;
            }
        }
        uuid::Builder::from_unix_timestamp_millis(ms, &rnd)
            .into_uuid()
            .hyphenated()
            .to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ids_are_v7_and_deterministic() {
        let mut a = IdGen::new(7);
        let mut b = IdGen::new(7);
        let x = a.uuid_v7(1_767_225_600_000);
        assert_eq!(x, b.uuid_v7(1_767_225_600_000));
        let u = uuid::Uuid::parse_str(&x).unwrap();
        assert_eq!(u.get_version_num(), 7);
        assert_ne!(x, a.uuid_v7(1_767_225_600_000));
    }

    #[test]
    fn monotonic_ids_ascend_within_a_millisecond() {
        let ms = 1_767_225_600_000;
        let mut g = IdGen::new(11);
        g.set_monotonic(true);
        let mut prev = String::new();
        for i in 0..5000 {
            let x = g.uuid_v7(ms);
            let u = uuid::Uuid::parse_str(&x).unwrap();
            assert_eq!(u.get_version_num(), 7, "{x}");
            assert_eq!(u.get_variant(), uuid::Variant::RFC4122, "{x}");
            // RFC 9562: the first 48 bits are the Unix time in milliseconds
            let (secs, nanos) = u.get_timestamp().unwrap().to_unix();
            assert_eq!(secs * 1000 + u64::from(nanos / 1_000_000), ms as u64, "{i}");
            assert!(x > prev, "{prev} then {x}");
            prev = x;
        }
        // a random field that runs out moves on to the next millisecond, still ascending
        g.last = Some((ms as u64, (1u128 << RAND_BITS) - 2));
        let x = g.uuid_v7(ms);
        assert!(x > prev);
        let (secs, nanos) = uuid::Uuid::parse_str(&x)
            .unwrap()
            .get_timestamp()
            .unwrap()
            .to_unix();
        assert_eq!(secs * 1000 + u64::from(nanos / 1_000_000), ms as u64 + 1);
        // off again: the plain generator (the demo's keys stay as they were)
        let mut a = IdGen::new(7);
        let mut b = IdGen::new(7);
        b.set_monotonic(true);
        b.set_monotonic(false);
        assert_eq!(a.uuid_v7(ms), b.uuid_v7(ms));
    }
}
