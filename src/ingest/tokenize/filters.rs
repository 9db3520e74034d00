//! The small token filters a tokenizer chains together, and the chain
//! itself. Each filter looks at one word (already cut out of the text by
//! Unicode word segmentation), may rewrite it in place, and says whether it
//! is kept. Filters work on a caller-owned `String` buffer so that the common
//! case allocates nothing per token.

use std::collections::HashSet;

use rust_stemmers::{Algorithm, Stemmer};

/// One step of the token pipeline.
pub trait TokenFilter: Send + Sync {
    /// Rewrites `token` in place if needed; returns `false` to drop it.
    fn apply(&self, token: &mut String) -> bool;

    /// A short fixed name for this filter, shown when describing a chain.
    fn name(&self) -> &'static str;
}

/// Full Unicode lowercasing (including the context-dependent final sigma).
#[derive(Clone, Copy, Debug, Default)]
pub struct LowercaseFilter;

impl TokenFilter for LowercaseFilter {
    fn apply(&self, token: &mut String) -> bool {
        if token.is_ascii() {
            token.make_ascii_lowercase();
        } else if token.chars().any(|c| c.to_lowercase().ne(std::iter::once(c))) {
            // Non-ASCII words with cased letters need `str::to_lowercase`,
            // which applies the Final_Sigma rule of Unicode SpecialCasing.
            let lowered = token.to_lowercase();
            token.clear();
            token.push_str(&lowered);
        }
        true
    }

    fn name(&self) -> &'static str {
        "lowercase"
    }
}

/// Drops tokens with no alphabetic character: pure numbers such as `2024`
/// or `3.14`. Tokens mixing letters and digits (`covid19`) are kept.
#[derive(Clone, Copy, Debug, Default)]
pub struct DropNonAlphabeticFilter;

impl TokenFilter for DropNonAlphabeticFilter {
    fn apply(&self, token: &mut String) -> bool {
        token.chars().any(char::is_alphabetic)
    }

    fn name(&self) -> &'static str {
        "drop-numbers"
    }
}

/// Keeps tokens whose length in Unicode scalar values (chars, not bytes)
/// lies in `min_chars..=max_chars`.
#[derive(Clone, Copy, Debug)]
pub struct LengthFilter {
    /// Shortest kept length, in chars.
    pub min_chars: usize,
    /// Longest kept length, in chars.
    pub max_chars: usize,
}

impl TokenFilter for LengthFilter {
    fn apply(&self, token: &mut String) -> bool {
        // A char is at most 4 bytes, so the byte length bounds the char count.
        if token.len() < self.min_chars || token.len() / 4 > self.max_chars {
            return false;
        }
        let chars = if token.is_ascii() {
            token.len()
        } else {
            token.chars().count()
        };
        (self.min_chars..=self.max_chars).contains(&chars)
    }

    fn name(&self) -> &'static str {
        "length"
    }
}

/// Drops tokens found (exactly) in a stopword set.
#[derive(Clone, Debug, Default)]
pub struct StopwordFilter {
    words: HashSet<String>,
}

impl StopwordFilter {
    /// A filter removing exactly these words (already normalised the same
    /// way as tokens reaching this filter).
    pub fn new<I: IntoIterator<Item = String>>(words: I) -> StopwordFilter {
        StopwordFilter {
            words: words.into_iter().collect(),
        }
    }

    /// How many distinct stopwords the filter holds.
    pub fn len(&self) -> usize {
        self.words.len()
    }

    /// Whether the filter holds no stopword at all.
    pub fn is_empty(&self) -> bool {
        self.words.is_empty()
    }
}

impl TokenFilter for StopwordFilter {
    fn apply(&self, token: &mut String) -> bool {
        !self.words.contains(token.as_str())
    }

    fn name(&self) -> &'static str {
        "stopwords"
    }
}

/// Replaces each token by its Snowball stem (`rust-stemmers`).
pub struct StemFilter {
    algorithm: Algorithm,
    stemmer: Stemmer,
}

impl StemFilter {
    /// A filter stemming with the given Snowball algorithm.
    pub fn new(algorithm: Algorithm) -> StemFilter {
        StemFilter {
            algorithm,
            stemmer: Stemmer::create(algorithm),
        }
    }
}

impl std::fmt::Debug for StemFilter {
    fn fmt(&self, formatter: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        formatter
            .debug_struct("StemFilter")
            .field("algorithm", &self.algorithm)
            .finish()
    }
}

impl TokenFilter for StemFilter {
    fn apply(&self, token: &mut String) -> bool {
        // The stemmer returns a borrowed value when the word is unchanged;
        // only a changed word costs an allocation, and the buffer keeps its
        // capacity.
        let changed = match self.stemmer.stem(token.as_str()) {
            std::borrow::Cow::Borrowed(_) => None,
            std::borrow::Cow::Owned(stem) => Some(stem),
        };
        if let Some(stem) = changed {
            token.clear();
            token.push_str(&stem);
        }
        !token.is_empty()
    }

    fn name(&self) -> &'static str {
        "stem"
    }
}

/// An ordered list of filters; a token is kept if every filter keeps it.
#[derive(Default)]
pub struct FilterChain {
    filters: Vec<Box<dyn TokenFilter>>,
}

impl FilterChain {
    /// Runs `token` through every filter in order, stopping at the first
    /// one that drops it.
    pub fn apply(&self, token: &mut String) -> bool {
        self.filters.iter().all(|filter| filter.apply(token))
    }

    /// The names of the filters, in order.
    pub fn filter_names(&self) -> Vec<&'static str> {
        self.filters.iter().map(|filter| filter.name()).collect()
    }
}

impl std::fmt::Debug for FilterChain {
    fn fmt(&self, formatter: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        formatter.debug_list().entries(self.filter_names()).finish()
    }
}

/// Assembles a [`FilterChain`] one filter at a time.
#[derive(Default)]
pub struct FilterChainBuilder {
    filters: Vec<Box<dyn TokenFilter>>,
}

impl FilterChainBuilder {
    /// An empty builder.
    pub fn new() -> FilterChainBuilder {
        FilterChainBuilder::default()
    }

    /// Appends a filter at the end of the chain.
    pub fn then<F: TokenFilter + 'static>(mut self, filter: F) -> FilterChainBuilder {
        self.filters.push(Box::new(filter));
        self
    }

    /// Appends a filter only when `condition` holds.
    pub fn then_if<F: TokenFilter + 'static>(
        self,
        condition: bool,
        make_filter: impl FnOnce() -> F,
    ) -> FilterChainBuilder {
        if condition { self.then(make_filter()) } else { self }
    }

    /// Finishes the chain.
    pub fn build(self) -> FilterChain {
        FilterChain {
            filters: self.filters,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run(filter: &dyn TokenFilter, word: &str) -> Option<String> {
        let mut buffer = word.to_string();
        filter.apply(&mut buffer).then_some(buffer)
    }

    #[test]
    fn lowercase_is_full_unicode_with_final_sigma() {
        // Source: Unicode SpecialCasing.txt, Final_Sigma (Σ at word end -> ς).
        assert_eq!(run(&LowercaseFilter, "ΟΔΟΣ").as_deref(), Some("οδος"));
        assert_eq!(
            run(&LowercaseFilter, "ΟΔΟΣ").map(|w| w.ends_with('ς')),
            Some(true)
        );
        // Source: Unicode UnicodeData.txt (U+00C9 lowercases to U+00E9).
        assert_eq!(run(&LowercaseFilter, "ÉTÉ").as_deref(), Some("été"));
        assert_eq!(run(&LowercaseFilter, "MiXeD").as_deref(), Some("mixed"));
    }

    #[test]
    fn length_counts_chars_not_bytes() {
        // Source: Unicode Standard ch. 2 (é is one scalar value, two UTF-8 bytes).
        let three = LengthFilter {
            min_chars: 3,
            max_chars: 3,
        };
        assert_eq!("été".len(), 5);
        assert!(run(&three, "été").is_some());
        assert!(run(&three, "abcd").is_none());
        assert!(run(&three, "ab").is_none());
    }

    #[test]
    fn stem_filter_leaves_unchanged_words_alone() {
        // Source: Snowball English stemmer definition ("sky" is one of its
        // invariant exceptional forms; Step 1a deletes the final "s" of "cats").
        let stem = StemFilter::new(Algorithm::English);
        assert_eq!(run(&stem, "sky").as_deref(), Some("sky"));
        assert_eq!(run(&stem, "cats").as_deref(), Some("cat"));
    }

    #[test]
    fn chain_stops_at_first_drop_and_lists_names() {
        // Source: common practice (a filter pipeline is a conjunction of its steps).
        let chain = FilterChainBuilder::new()
            .then(LowercaseFilter)
            .then_if(true, || DropNonAlphabeticFilter)
            .then_if(false, || LengthFilter {
                min_chars: 50,
                max_chars: 60,
            })
            .then(StopwordFilter::new(["the".to_string()]))
            .build();
        assert_eq!(chain.filter_names(), ["lowercase", "drop-numbers", "stopwords"]);
        let mut token = String::from("THE");
        assert!(!chain.apply(&mut token));
        let mut token = String::from("Cat");
        assert!(chain.apply(&mut token));
        assert_eq!(token, "cat");
        let mut token = String::from("1999");
        assert!(!chain.apply(&mut token));
    }
}
