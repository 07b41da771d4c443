//! The `key=value` words of a machine line, as the console writes them (`verdict=fail
//! explained=1`, `fault=R2 mode=open score=0.93 ...`): one reader for the PC, the instrument and
//! the tests, so that every side reads a line the same way.
//!
//! Words are separated by single spaces; a word without `=` (a heading, a plain number) is
//! skipped; a value runs from the first `=` to the end of its word, so it may hold `=` itself.
//! Nothing is allocated and nothing panics: the reader borrows the line.

/// The `key=value` words of one line, in order (see [`pairs`]).
#[derive(Debug, Clone)]
pub struct Pairs<'a> {
    words: core::str::Split<'a, char>,
}

impl<'a> Iterator for Pairs<'a> {
    type Item = (&'a str, &'a str);

    fn next(&mut self) -> Option<Self::Item> {
        self.words.by_ref().find_map(|w| w.split_once('='))
    }
}

/// The `(key, value)` pairs of `line`, in order; words without `=` are skipped.
pub fn pairs(line: &str) -> Pairs<'_> {
    Pairs {
        words: line.split(' '),
    }
}

/// The value of the first word `key=value` of `line`, if there is one.
pub fn value<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    pairs(line).find(|(k, _)| *k == key).map(|(_, v)| v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pairs_in_order_skipping_plain_words() {
        let line = "fault=R2 mode=open score=0.93 likely equivalent=RE2:short,CE:short";
        let got: Vec<_> = pairs(line).collect();
        assert_eq!(
            got,
            [
                ("fault", "R2"),
                ("mode", "open"),
                ("score", "0.93"),
                ("equivalent", "RE2:short,CE:short"),
            ]
        );
    }

    #[test]
    fn value_is_the_first_match_of_the_whole_key() {
        let line = "vb=1.5 vbe=0.6 vb=9";
        assert_eq!(value(line, "vb"), Some("1.5"));
        assert_eq!(value(line, "vbe"), Some("0.6"));
        // A key is matched whole: `v` is not a prefix match of `vb`.
        assert_eq!(value(line, "v"), None);
        assert_eq!(value(line, "ve"), None);
    }

    #[test]
    fn empty_values_extra_spaces_and_equals_inside_a_value() {
        assert_eq!(value("a= b=2", "a"), Some(""));
        assert_eq!(value("  a=1  b=2 ", "b"), Some("2"));
        assert_eq!(value("expr=x=1", "expr"), Some("x=1"));
        assert_eq!(pairs("").count(), 0);
        assert_eq!(pairs("ok no pairs here").count(), 0);
        assert_eq!(value("=5", ""), Some("5"));
    }
}
