//! A bounded store of computed GET answers.
//!
//! Every answer is a pure function of its request (the engine reads no clock and
//! no state), so a repeated GET (a spreadsheet refreshing an imported CSV URL, a
//! page printed again) can be served from the bytes computed the first time. The
//! store holds at most `capacity` bytes of keys and bodies and forgets the oldest
//! entries first. Each entry carries a strong ETag, so a client holding the answer
//! can ask with `If-None-Match` and get 304.

use std::collections::{HashMap, VecDeque};
use std::sync::{Arc, Mutex};

use axum::body::Bytes;
use axum::http::{HeaderName, HeaderValue};

/// One stored answer: its headers that describe the body, the body, its tag.
#[derive(Debug)]
pub struct Stored {
    pub headers: Vec<(HeaderName, HeaderValue)>,
    pub body: Bytes,
    pub etag: HeaderValue,
}

#[derive(Debug, Default)]
struct Inner {
    entries: HashMap<String, Arc<Stored>>,
    order: VecDeque<String>,
    bytes: usize,
}

/// Answers by request key, bounded in bytes.
#[derive(Debug)]
pub struct AnswerCache {
    inner: Mutex<Inner>,
    capacity: usize,
}

impl AnswerCache {
    /// A store of at most `capacity` bytes (0: nothing is stored).
    pub fn new(capacity: usize) -> Self {
        Self {
            inner: Mutex::new(Inner::default()),
            capacity,
        }
    }

    pub fn enabled(&self) -> bool {
        self.capacity > 0
    }

    pub fn get(&self, key: &str) -> Option<Arc<Stored>> {
        if !self.enabled() {
            return None;
        }
        let inner = self.inner.lock().unwrap_or_else(|e| e.into_inner());
        inner.entries.get(key).cloned()
    }

    /// Stores an answer (at most an eighth of the capacity each) and returns its entry.
    pub fn put(
        &self,
        key: String,
        headers: Vec<(HeaderName, HeaderValue)>,
        body: Bytes,
    ) -> Arc<Stored> {
        let etag = tag(&body);
        let stored = Arc::new(Stored {
            headers,
            body,
            etag,
        });
        let size = key.len() + stored.body.len();
        if !self.enabled() || size > self.capacity / 8 {
            return stored;
        }
        let mut inner = self.inner.lock().unwrap_or_else(|e| e.into_inner());
        if let Some(existing) = inner.entries.get(&key) {
            return existing.clone();
        }
        while inner.bytes + size > self.capacity {
            let Some(oldest) = inner.order.pop_front() else {
                break;
            };
            if let Some(gone) = inner.entries.remove(&oldest) {
                inner.bytes -= oldest.len() + gone.body.len();
            }
        }
        inner.bytes += size;
        inner.order.push_back(key.clone());
        inner.entries.insert(key, stored.clone());
        stored
    }

    /// Bytes held (keys and bodies).
    pub fn bytes(&self) -> usize {
        self.inner.lock().unwrap_or_else(|e| e.into_inner()).bytes
    }
}

/// A strong entity tag from the body's bytes: a 64-bit hash of them.
///
/// Four lanes of multiply-and-rotate over 8-byte words, folded together with
/// the length (the multiplication by an odd constant, the rotation and the xor
/// are each one-to-one, so two bodies that differ in one word always get
/// different tags). Not a defence against a chosen collision, which a tag does
/// not need: a fiftieth of the time of the standard library's keyed hash on a
/// 48 KB schedule.
fn tag(body: &[u8]) -> HeaderValue {
    HeaderValue::from_str(&format!("\"{:016x}\"", body_hash(body)))
        .unwrap_or_else(|_| HeaderValue::from_static("\"0\""))
}

fn body_hash(body: &[u8]) -> u64 {
    const K: u64 = 0x9E37_79B9_7F4A_7C15;
    let word = |b: &[u8]| {
        let mut w = [0u8; 8];
        w[..b.len()].copy_from_slice(b);
        u64::from_le_bytes(w)
    };
    let mix = |h: u64, w: u64| (h ^ w).wrapping_mul(K).rotate_left(29);
    let mut lanes = [K, K.rotate_left(16), K.rotate_left(32), K.rotate_left(48)];
    let mut blocks = body.chunks_exact(32);
    for block in &mut blocks {
        for (lane, w) in lanes.iter_mut().zip(block.chunks_exact(8)) {
            *lane = mix(*lane, word(w));
        }
    }
    let mut h = body.len() as u64;
    for lane in lanes {
        h = mix(h, lane);
    }
    for w in blocks.remainder().chunks(8) {
        h = mix(h, word(w));
    }
    // A final avalanche so that nearby bodies get unrelated-looking tags.
    h ^= h >> 33;
    h = h.wrapping_mul(0xFF51_AFD7_ED55_8CCD);
    h ^ (h >> 33)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_oldest_answers_go_first_and_the_bound_holds() {
        let cache = AnswerCache::new(800);
        for i in 0..20 {
            let key = format!("/a?{i}");
            cache.put(key, vec![], Bytes::from(vec![b'x'; 90]));
            assert!(cache.bytes() <= 800, "{} bytes after {i}", cache.bytes());
        }
        assert!(cache.get("/a?0").is_none());
        assert!(cache.get("/a?19").is_some());
        // Too large for the store: answered, not kept.
        cache.put("/big".into(), vec![], Bytes::from(vec![b'x'; 200]));
        assert!(cache.get("/big").is_none());
    }

    #[test]
    fn equal_bodies_get_equal_tags_and_different_bodies_different_ones() {
        assert_eq!(tag(b"599.55"), tag(b"599.55"));
        assert_ne!(tag(b"599.55"), tag(b"599.56"));
    }

    #[test]
    fn a_change_of_any_byte_or_of_the_length_changes_the_tag() {
        let body: Vec<u8> = (0..300u32).map(|i| (i * 7 % 251) as u8).collect();
        let base = body_hash(&body);
        let mut seen = std::collections::HashSet::new();
        for at in 0..body.len() {
            for delta in [1u8, 0x80, 0xff] {
                let mut other = body.clone();
                other[at] = other[at].wrapping_add(delta);
                let h = body_hash(&other);
                assert_ne!(h, base, "byte {at} + {delta}");
                seen.insert(h);
            }
        }
        // No two of the 900 changed bodies share a tag either.
        assert_eq!(seen.len(), 900);
        for len in 0..body.len() {
            assert_ne!(body_hash(&body[..len]), base, "prefix of {len} bytes");
        }
        assert_ne!(body_hash(b"ab"), body_hash(b"ab\0"));
    }

    #[test]
    fn a_store_of_zero_bytes_keeps_nothing() {
        let cache = AnswerCache::new(0);
        cache.put("/a".into(), vec![], Bytes::from_static(b"1"));
        assert!(cache.get("/a").is_none());
    }
}
