//! Field paths and their places in the file: maps `generators[2].governor.droop_pct` to a line and
//! column.
//!
//! Owns the [`FieldPath`] type and a small tree of positions built from yaml-rust2's marked event
//! parser. It is built only after serde_yaml has accepted the syntax, so it never reports a
//! syntax error of its own; if it cannot parse, every lookup simply answers "unknown place".
//! It must not interpret values: it knows keys, list positions and marks, nothing else.

use std::fmt;
use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser};
use yaml_rust2::scanner::Marker;

/// One step of a field path.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Seg {
    Key(String),
    Index(usize),
}

/// A path into a file such as `generators[2].governor.droop_pct`.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct FieldPath(pub Vec<Seg>);

impl FieldPath {
    pub fn root() -> FieldPath {
        FieldPath(Vec::new())
    }
    /// This path with a mapping key appended.
    pub fn key(&self, key: &str) -> FieldPath {
        let mut p = self.clone();
        p.0.push(Seg::Key(key.to_string()));
        p
    }
    /// This path with a list position appended.
    pub fn index(&self, index: usize) -> FieldPath {
        let mut p = self.clone();
        p.0.push(Seg::Index(index));
        p
    }
}

impl fmt::Display for FieldPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, seg) in self.0.iter().enumerate() {
            match seg {
                Seg::Key(k) => {
                    if i > 0 {
                        f.write_str(".")?;
                    }
                    f.write_str(k)?;
                }
                Seg::Index(n) => write!(f, "[{n}]")?,
            }
        }
        Ok(())
    }
}

/// A 1-based line and column.
pub type Place = (usize, usize);

/// Positions of every key and value in one YAML document.
#[derive(Debug, Default)]
pub struct Locator {
    root: Option<Node>,
}

#[derive(Debug)]
struct Node {
    place: Place,
    kind: Kind,
}

#[derive(Debug)]
enum Kind {
    /// Keys that are not plain scalars (rare in our files) are kept with an empty name.
    Map(Vec<(String, Place, Node)>),
    Seq(Vec<Node>),
    /// Scalars and aliases: aliases are not followed, so a path through one stops at the alias.
    Leaf,
}

impl Locator {
    /// Builds the position tree; on any parser complaint the locator knows no places.
    pub fn new(text: &str) -> Locator {
        let mut builder = Builder::default();
        let mut parser = Parser::new_from_str(text);
        if parser.load(&mut builder, false).is_err() || builder.failed {
            return Locator { root: None };
        }
        Locator { root: builder.root }
    }

    /// Where the value at `path` starts; when the path does not exist (a missing field, say), the
    /// place of the nearest ancestor that does.
    pub fn value(&self, path: &FieldPath) -> Option<Place> {
        self.find(path, false)
    }

    /// Where the key that ends `path` is written (for unknown keys); falls back like [`Self::value`].
    pub fn key(&self, path: &FieldPath) -> Option<Place> {
        self.find(path, true)
    }

    /// Whether `path` itself is written in the file (no fallback to an ancestor).
    pub fn exists(&self, path: &FieldPath) -> bool {
        let Some(mut node) = self.root.as_ref() else {
            return false;
        };
        for seg in &path.0 {
            let next = match (seg, &node.kind) {
                (Seg::Key(k), Kind::Map(entries)) => entries
                    .iter()
                    .rev()
                    .find(|(name, _, _)| name == k)
                    .map(|e| &e.2),
                (Seg::Index(j), Kind::Seq(items)) => items.get(*j),
                _ => None,
            };
            match next {
                Some(n) => node = n,
                None => return false,
            }
        }
        true
    }

    fn find(&self, path: &FieldPath, want_key: bool) -> Option<Place> {
        let mut node = self.root.as_ref()?;
        // The best answer so far: where the nearest existing ancestor is written.
        let mut best = node.place;
        let n = path.0.len();
        for (i, seg) in path.0.iter().enumerate() {
            let last = i + 1 == n;
            let next = match (seg, &node.kind) {
                (Seg::Key(k), Kind::Map(entries)) => {
                    // YAML allows a repeated key only if serde_yaml accepted it; take the last, as
                    // serde does.
                    match entries.iter().rev().find(|(name, _, _)| name == k) {
                        Some((_, key_place, child)) => {
                            if last && want_key {
                                return Some(*key_place);
                            }
                            // For an ancestor, the key line reads better than the value's start.
                            best = if last { child.place } else { *key_place };
                            child
                        }
                        None => return Some(best),
                    }
                }
                (Seg::Index(j), Kind::Seq(items)) => match items.get(*j) {
                    Some(child) => {
                        best = child.place;
                        child
                    }
                    None => return Some(best),
                },
                _ => return Some(best),
            };
            node = next;
        }
        Some(best)
    }
}

/// Turns the event stream into a [`Node`] tree with an explicit stack (no recursion).
#[derive(Default)]
struct Builder {
    stack: Vec<Open>,
    root: Option<Node>,
    failed: bool,
    documents: usize,
}

enum Open {
    Map {
        place: Place,
        entries: Vec<(String, Place, Node)>,
        pending_key: Option<(String, Place)>,
    },
    Seq {
        place: Place,
        items: Vec<Node>,
    },
}

fn place_of(mark: Marker) -> Place {
    // yaml-rust2 counts lines from 1 and columns from 0.
    (mark.line(), mark.col() + 1)
}

impl Builder {
    fn finish(&mut self, node: Node, scalar_text: Option<String>) {
        match self.stack.last_mut() {
            None => {
                if self.root.is_none() {
                    self.root = Some(node);
                }
            }
            Some(Open::Seq { items, .. }) => items.push(node),
            Some(Open::Map {
                entries,
                pending_key,
                ..
            }) => match pending_key.take() {
                None => *pending_key = Some((scalar_text.unwrap_or_default(), node.place)),
                Some((k, kp)) => entries.push((k, kp, node)),
            },
        }
    }
}

impl MarkedEventReceiver for Builder {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        let place = place_of(mark);
        match ev {
            Event::DocumentStart => {
                self.documents += 1;
                if self.documents > 1 {
                    self.failed = true;
                }
            }
            Event::Scalar(text, ..) => self.finish(
                Node {
                    place,
                    kind: Kind::Leaf,
                },
                Some(text),
            ),
            Event::Alias(_) => self.finish(
                Node {
                    place,
                    kind: Kind::Leaf,
                },
                None,
            ),
            Event::SequenceStart(..) => self.stack.push(Open::Seq {
                place,
                items: Vec::new(),
            }),
            Event::MappingStart(..) => self.stack.push(Open::Map {
                place,
                entries: Vec::new(),
                pending_key: None,
            }),
            Event::SequenceEnd | Event::MappingEnd => {
                let node = match self.stack.pop() {
                    Some(Open::Seq { place, items }) => Node {
                        place,
                        kind: Kind::Seq(items),
                    },
                    Some(Open::Map { place, entries, .. }) => Node {
                        // A block mapping's start mark can lie after its first key; the first key
                        // is where a reader looks for the mapping.
                        place: entries.first().map_or(place, |e| place.min(e.1)),
                        kind: Kind::Map(entries),
                    },
                    None => {
                        self.failed = true;
                        return;
                    }
                };
                self.finish(node, None);
            }
            _ => {}
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn path(s: &[&str]) -> FieldPath {
        FieldPath(
            s.iter()
                .map(|x| match x.parse::<usize>() {
                    Ok(n) => Seg::Index(n),
                    Err(_) => Seg::Key(x.to_string()),
                })
                .collect(),
        )
    }

    const TEXT: &str = "\
plant:
  name: x
  nominal_hz: 50
generators:
  - id: a
    governor:
      model: steam
      droop_pct: 5
  - id: b
    governor: { model: engine, droop_pct: fast }
";

    #[test]
    fn display_matches_the_documented_form() {
        assert_eq!(
            path(&["generators", "2", "governor", "droop_pct"]).to_string(),
            "generators[2].governor.droop_pct"
        );
        assert_eq!(FieldPath::root().index(0).key("x").to_string(), "[0].x");
    }

    #[test]
    fn finds_block_values_and_keys() {
        let loc = Locator::new(TEXT);
        // `droop_pct: 5` on line 8: key at column 7, value at column 18.
        assert_eq!(
            loc.key(&path(&["generators", "0", "governor", "droop_pct"])),
            Some((8, 7))
        );
        assert_eq!(
            loc.value(&path(&["generators", "0", "governor", "droop_pct"])),
            Some((8, 18))
        );
        assert_eq!(loc.value(&path(&["plant", "nominal_hz"])), Some((3, 15)));
    }

    #[test]
    fn finds_flow_values() {
        let loc = Locator::new(TEXT);
        let p = path(&["generators", "1", "governor", "droop_pct"]);
        assert_eq!(loc.value(&p), Some((10, 43)));
        assert_eq!(loc.key(&p), Some((10, 32)));
    }

    #[test]
    fn missing_key_falls_back_to_nearest_ancestor() {
        let loc = Locator::new(TEXT);
        // generators[1].governor exists (line 10); turbine_s does not.
        let p = path(&["generators", "1", "governor", "turbine_s"]);
        assert_eq!(loc.value(&p).map(|p| p.0), Some(10));
        // A missing item of a list falls back to the list's key.
        assert_eq!(
            loc.value(&path(&["generators", "7", "id"])).map(|p| p.0),
            Some(4)
        );
        // A missing top-level key falls back to the document start.
        assert_eq!(loc.value(&path(&["loads"])).map(|p| p.0), Some(1));
    }

    #[test]
    fn exists_does_not_fall_back() {
        let loc = Locator::new(TEXT);
        assert!(loc.exists(&path(&["generators", "1", "governor", "droop_pct"])));
        assert!(loc.exists(&path(&["generators", "0", "governor"])));
        assert!(!loc.exists(&path(&["generators", "1", "governor", "turbine_s"])));
        assert!(!loc.exists(&path(&["generators", "7"])));
        assert!(!loc.exists(&path(&["loads"])));
    }

    #[test]
    fn aliases_are_not_followed() {
        let text = "base: &b { x: 1 }\nother: *b\n";
        let loc = Locator::new(text);
        assert_eq!(loc.value(&path(&["other", "x"])), Some((2, 1)));
        assert_eq!(loc.value(&path(&["base", "x"])), Some((1, 15)));
    }

    #[test]
    fn broken_text_knows_no_places() {
        let loc = Locator::new("a: [1, 2\n");
        assert_eq!(loc.value(&path(&["a"])), None);
    }
}
