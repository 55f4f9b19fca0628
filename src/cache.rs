//! A bounded store of computed GET answers.
//!
//! Every answer is a pure function of its request (the engine reads no clock and
//! no state), so a repeated GET (a spreadsheet refreshing an imported CSV URL, a
//! page printed again) can be served from the bytes computed the first time. The
//! store holds at most `capacity` bytes of keys and bodies and forgets the oldest
//! entries first. Each entry carries a strong ETag, so a client holding the answer
//! can ask with `If-None-Match` and get 304.

use std::collections::{HashMap, VecDeque};
use std::hash::{Hash, Hasher};
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

/// A strong entity tag from the body's bytes.
fn tag(body: &[u8]) -> HeaderValue {
    let mut h = std::collections::hash_map::DefaultHasher::new();
    body.hash(&mut h);
    body.len().hash(&mut h);
    HeaderValue::from_str(&format!("\"{:016x}\"", h.finish()))
        .unwrap_or_else(|_| HeaderValue::from_static("\"0\""))
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
    fn a_store_of_zero_bytes_keeps_nothing() {
        let cache = AnswerCache::new(0);
        cache.put("/a".into(), vec![], Bytes::from_static(b"1"));
        assert!(cache.get("/a").is_none());
    }
}
