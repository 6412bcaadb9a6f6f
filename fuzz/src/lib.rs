//! Helpers shared by the fuzz targets: turn fuzz bytes into hostile numbers (NaN, ±inf, subnormal, huge, zero,
//! negative) mixed with plausible PCB-sized values, so the fuzzer reaches both the checks and the models.

/// A reader of numbers from fuzz bytes. When the bytes run out it yields plausible values, so short inputs still
/// reach deep code.
pub struct Numbers<'a> {
    bytes: &'a [u8],
}

impl<'a> Numbers<'a> {
    pub fn new(bytes: &'a [u8]) -> Self {
        Numbers { bytes }
    }

    pub fn byte(&mut self) -> u8 {
        match self.bytes.split_first() {
            Some((b, rest)) => {
                self.bytes = rest;
                *b
            }
            None => 0,
        }
    }

    fn raw_f64(&mut self) -> f64 {
        let mut buf = [0u8; 8];
        for b in &mut buf {
            *b = self.byte();
        }
        f64::from_le_bytes(buf)
    }

    /// A value near `typical` (scaled by a factor 2^(−8..8)) most of the time, otherwise a hostile value.
    pub fn f64_near(&mut self, typical: f64) -> f64 {
        if self.bytes.is_empty() {
            return typical;
        }
        let tag = self.byte();
        match tag {
            0 => f64::NAN,
            1 => f64::INFINITY,
            2 => f64::NEG_INFINITY,
            3 => f64::MIN_POSITIVE / 4.0, // subnormal
            4 => 1e300,
            5 => -typical,
            6 => 0.0,
            7 => -0.0,
            8 => f64::MAX,
            9 => f64::EPSILON * typical,
            10..=40 => self.raw_f64(),
            _ => {
                let scale = (f64::from(self.byte()) - 128.0) / 16.0;
                typical * scale.exp2()
            }
        }
    }

    /// Any f64 bit pattern.
    pub fn any_f64(&mut self) -> f64 {
        self.raw_f64()
    }

    pub fn pick<T: Copy>(&mut self, options: &[T]) -> T {
        options[usize::from(self.byte()) % options.len()]
    }

    pub fn bool(&mut self) -> bool {
        self.byte() & 1 == 1
    }
}

/// True when every number in the JSON value is finite (serde_json writes non-finite floats as `null`, so a
/// `null` where a number was expected is counted as non-finite by the callers that know the schema).
pub fn all_finite(v: &serde_json::Value) -> bool {
    match v {
        serde_json::Value::Number(n) => n.as_f64().is_some_and(f64::is_finite),
        serde_json::Value::Array(a) => a.iter().all(all_finite),
        serde_json::Value::Object(o) => o.values().all(all_finite),
        _ => true,
    }
}
