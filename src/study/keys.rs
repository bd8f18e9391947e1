//! One index from key path to position for a study file, built once per file from the YAML
//! parser's events (the libyaml port that serde_yaml itself uses), so that every check that
//! reports a position looks it up instead of scanning the text. Building the index also
//! refuses duplicate keys in any mapping (block or flow, plain or quoted, a key given through
//! an alias included): serde_yaml keeps the last of them silently.
//!
//! The work is linear in the file size: one pass over the events, one hash insert per key or
//! list entry. Paths are stored as a tree (parent node and segment), never as whole strings,
//! so a long key with many children costs its length once.

#![allow(unsafe_code)] // the libyaml event API (see the crate root)

use std::collections::HashMap;
use std::mem::MaybeUninit;
use unsafe_libyaml as yaml_unsafe;

/// A 1-based line and column (columns count characters, as an editor shows them).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Pos {
    /// 1-based line.
    pub line: usize,
    /// 1-based column.
    pub column: usize,
}

/// One step of a key path.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
enum Seg {
    Key(Box<str>),
    Index(usize),
}

/// A key given twice in one mapping.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Duplicate {
    /// Key path of the repeated key, for example `quantities.efficiency`.
    pub path: String,
    /// Where it is first given.
    pub first: Pos,
    /// Where it is given again.
    pub second: Pos,
}

impl Duplicate {
    /// The sentence for a message: `defined twice (lines 9 and 14)`.
    pub fn message(&self) -> String {
        if self.first.line == self.second.line {
            format!(
                "defined twice (line {}, columns {} and {}): give every key once",
                self.first.line, self.first.column, self.second.column
            )
        } else {
            format!(
                "defined twice (lines {} and {}): give every key once",
                self.first.line, self.second.line
            )
        }
    }
}

/// Key path → position of the key (or of the list entry) in one YAML document.
#[derive(Debug, Default)]
pub struct KeyIndex {
    /// Per node: parent node, its segment, and its position. Node 0 is the document's root.
    nodes: Vec<(usize, Option<Seg>, Option<Pos>)>,
    children: HashMap<(usize, Seg), usize>,
    /// Units of work done building and looking up (events, key bytes hashed, path segments
    /// resolved): what the linearity test counts.
    work: std::cell::Cell<usize>,
}

/// Why an index could not be built.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum IndexError {
    /// A key is given twice in one mapping.
    Duplicate(Duplicate),
    /// The YAML parser refused the text (the reading proper words that error).
    Syntax,
}

/// A libyaml parser over a borrowed string; boxed because the parser points at itself.
struct Parser<'a> {
    raw: Box<MaybeUninit<yaml_unsafe::yaml_parser_t>>,
    _input: &'a [u8],
}

/// What the index needs of an event.
enum Ev {
    MapStart,
    SeqStart,
    End,
    Scalar(String, Option<Vec<u8>>),
    Alias(Vec<u8>),
    DocumentEnd,
    Other,
}

/// Copies a NUL-terminated anchor name.
///
/// # Safety
/// `p` is null or points at a NUL-terminated string that libyaml owns for the event's life.
unsafe fn anchor(p: *const u8) -> Option<Vec<u8>> {
    if p.is_null() {
        return None;
    }
    // SAFETY: as documented above.
    let s = unsafe { std::ffi::CStr::from_ptr(p.cast()) };
    Some(s.to_bytes().to_vec())
}

impl<'a> Parser<'a> {
    fn new(input: &'a [u8]) -> Option<Self> {
        let mut raw = Box::new(MaybeUninit::<yaml_unsafe::yaml_parser_t>::uninit());
        // SAFETY: the parser lives in a box that never moves while in use and is deleted in
        // `drop`; the input outlives the parser (lifetime 'a).
        unsafe {
            let p = raw.as_mut_ptr();
            if yaml_unsafe::yaml_parser_initialize(p).fail {
                return None;
            }
            yaml_unsafe::yaml_parser_set_encoding(p, yaml_unsafe::YAML_UTF8_ENCODING);
            yaml_unsafe::yaml_parser_set_input_string(p, input.as_ptr(), input.len() as _);
        }
        Some(Parser { raw, _input: input })
    }

    fn next(&mut self) -> Result<(Ev, Pos), ()> {
        let mut event = MaybeUninit::<yaml_unsafe::yaml_event_t>::uninit();
        // SAFETY: the parser is initialised (see `new`); a parsed event is read according to
        // its type and deleted before returning.
        unsafe {
            let p = self.raw.as_mut_ptr();
            let e = event.as_mut_ptr();
            if yaml_unsafe::yaml_parser_parse(p, e).fail {
                return Err(());
            }
            let mark = (*e).start_mark;
            let ev = match (*e).type_ {
                yaml_unsafe::YAML_MAPPING_START_EVENT => Ev::MapStart,
                yaml_unsafe::YAML_SEQUENCE_START_EVENT => Ev::SeqStart,
                yaml_unsafe::YAML_MAPPING_END_EVENT | yaml_unsafe::YAML_SEQUENCE_END_EVENT => {
                    Ev::End
                }
                yaml_unsafe::YAML_SCALAR_EVENT => {
                    let s = (*e).data.scalar;
                    let bytes = if s.value.is_null() {
                        &[][..]
                    } else {
                        std::slice::from_raw_parts(s.value, s.length as usize)
                    };
                    Ev::Scalar(
                        String::from_utf8_lossy(bytes).into_owned(),
                        anchor(s.anchor),
                    )
                }
                yaml_unsafe::YAML_ALIAS_EVENT => {
                    Ev::Alias(anchor((*e).data.alias.anchor).unwrap_or_default())
                }
                yaml_unsafe::YAML_DOCUMENT_END_EVENT | yaml_unsafe::YAML_STREAM_END_EVENT => {
                    Ev::DocumentEnd
                }
                _ => Ev::Other,
            };
            yaml_unsafe::yaml_event_delete(e);
            let pos = Pos {
                line: mark.line as usize + 1,
                column: mark.column as usize + 1,
            };
            Ok((ev, pos))
        }
    }
}

impl Drop for Parser<'_> {
    fn drop(&mut self) {
        // SAFETY: initialised in `new` (a parser is only built when that succeeded).
        unsafe { yaml_unsafe::yaml_parser_delete(self.raw.as_mut_ptr()) }
    }
}

/// An open collection while walking the events.
enum Frame {
    /// A mapping: its node, and the node of the value that comes next (`None`: a key comes).
    Map { node: usize, value: Option<usize> },
    /// A list: its node and the index of the next entry.
    Seq { node: usize, next: usize },
}

impl KeyIndex {
    /// Builds the index of the first document of `text`.
    pub fn build(text: &str) -> Result<KeyIndex, IndexError> {
        let mut ix = KeyIndex {
            nodes: vec![(0, None, None)],
            ..KeyIndex::default()
        };
        let mut parser = Parser::new(text.as_bytes()).ok_or(IndexError::Syntax)?;
        let mut stack: Vec<Frame> = Vec::new();
        // Scalars named by an anchor, for keys given through an alias.
        let mut anchors: HashMap<Vec<u8>, String> = HashMap::new();
        let mut root_done = false;
        loop {
            let (ev, pos) = parser.next().map_err(|()| IndexError::Syntax)?;
            ix.bump(1);
            // (the text of a scalar key, whether a collection opens and whether it is a map)
            let (key, opens) = match ev {
                Ev::DocumentEnd => break,
                Ev::Other => continue,
                Ev::End => {
                    stack.pop();
                    continue;
                }
                Ev::Scalar(s, a) => {
                    if let Some(a) = a {
                        anchors.insert(a, s.clone());
                    }
                    (Some(s), None)
                }
                Ev::Alias(a) => (anchors.get(&a).cloned(), None),
                Ev::MapStart => (None, Some(true)),
                Ev::SeqStart => (None, Some(false)),
            };
            // The node this event belongs to.
            let node = match stack.last_mut() {
                None => {
                    if root_done {
                        continue;
                    }
                    root_done = true;
                    0
                }
                Some(Frame::Seq { node, next }) => {
                    let (parent, i) = (*node, *next);
                    *next += 1;
                    ix.child(parent, Seg::Index(i), pos)?
                }
                Some(Frame::Map { node, value }) => match value.take() {
                    Some(v) => v,
                    None => {
                        // A key. A collection used as a key (or an alias of one) gets a node
                        // that no path reaches.
                        let parent = *node;
                        let v = match key {
                            Some(k) => ix.child(parent, Seg::Key(k.into_boxed_str()), pos)?,
                            None => ix.orphan(pos),
                        };
                        if let Some(Frame::Map { value, .. }) = stack.last_mut() {
                            *value = Some(v);
                        }
                        if let Some(is_map) = opens {
                            let orphan = ix.orphan(pos);
                            stack.push(Frame::open(is_map, orphan));
                        }
                        continue;
                    }
                },
            };
            if let Some(is_map) = opens {
                stack.push(Frame::open(is_map, node));
            }
        }
        Ok(ix)
    }

    fn bump(&self, n: usize) {
        self.work.set(self.work.get().saturating_add(n));
    }

    /// Units of work done so far (for tests of linearity).
    pub fn work(&self) -> usize {
        self.work.get()
    }

    fn orphan(&mut self, pos: Pos) -> usize {
        self.nodes.push((usize::MAX, None, Some(pos)));
        self.nodes.len() - 1
    }

    fn child(&mut self, parent: usize, seg: Seg, pos: Pos) -> Result<usize, IndexError> {
        if let Seg::Key(k) = &seg {
            self.bump(k.len());
        }
        let next = self.nodes.len();
        match self.children.entry((parent, seg.clone())) {
            std::collections::hash_map::Entry::Occupied(o) => {
                let first = self.nodes[*o.get()].2.unwrap_or(pos);
                let mut path = self.path_of(parent);
                push_seg(&mut path, &seg);
                Err(IndexError::Duplicate(Duplicate {
                    path,
                    first,
                    second: pos,
                }))
            }
            std::collections::hash_map::Entry::Vacant(v) => {
                v.insert(next);
                self.nodes.push((parent, Some(seg), Some(pos)));
                Ok(next)
            }
        }
    }

    /// The key path of a node, as serde_path_to_error writes it (`meshes[1].cells`).
    fn path_of(&self, mut node: usize) -> String {
        let mut segs = Vec::new();
        while node != 0 && node < self.nodes.len() {
            let (parent, seg, _) = &self.nodes[node];
            match seg {
                Some(s) => segs.push(s),
                None => break,
            }
            node = *parent;
        }
        let mut path = String::new();
        for s in segs.into_iter().rev() {
            push_seg(&mut path, s);
        }
        path
    }

    /// The position of `path` (for example `quantities.efficiency.values.L1` or
    /// `meshes[2].cells`), or of its longest prefix the file holds; `None` when not even the
    /// first segment is in the file. The second value tells whether the whole path was found.
    pub fn find(&self, path: &str) -> Option<(Pos, bool)> {
        let mut node = 0;
        let mut rest = path;
        let mut found = None;
        while !rest.is_empty() {
            self.bump(1);
            let step = if let Some(r) = rest.strip_prefix('[') {
                // `[n]`
                let close = r.find(']')?;
                let i: usize = match r[..close].parse() {
                    Ok(i) => i,
                    Err(_) => break,
                };
                self.children
                    .get(&(node, Seg::Index(i)))
                    .map(|&c| (c, &r[close + 1..]))
            } else {
                // The longest key that the path continues with (keys may hold dots).
                let mut ends: Vec<usize> = rest
                    .char_indices()
                    .filter(|&(_, c)| c == '.' || c == '[')
                    .map(|(i, _)| i)
                    .collect();
                ends.push(rest.len());
                ends.iter().rev().find_map(|&e| {
                    self.bump(1);
                    self.children
                        .get(&(node, Seg::Key(rest[..e].into())))
                        .map(|&c| (c, &rest[e..]))
                })
            };
            let Some((child, r)) = step else { break };
            node = child;
            found = self.nodes[node].2;
            rest = r.strip_prefix('.').unwrap_or(r);
        }
        found.map(|p| (p, rest.is_empty()))
    }

    /// The position of `path` or of its longest prefix in the file.
    pub fn pos(&self, path: &str) -> Option<Pos> {
        self.find(path).map(|(p, _)| p)
    }
}

fn push_seg(path: &mut String, seg: &Seg) {
    match seg {
        Seg::Key(k) => {
            if !path.is_empty() {
                path.push('.');
            }
            path.push_str(k);
        }
        Seg::Index(i) => {
            path.push_str(&format!("[{i}]"));
        }
    }
}

impl Frame {
    fn open(is_map: bool, node: usize) -> Frame {
        if is_map {
            Frame::Map { node, value: None }
        } else {
            Frame::Seq { node, next: 0 }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dup(text: &str) -> Duplicate {
        match KeyIndex::build(text) {
            Err(IndexError::Duplicate(d)) => d,
            other => panic!("expected a duplicate in {text:?}, got {other:?}"),
        }
    }

    #[test]
    fn positions_of_keys_and_entries() {
        let t = "format: 1\nmeshes:\n  - name: a\n    cells: 4\n  - {name: b, cells: 8}\nquantities:\n  q:\n    values: {a: 1, 'b.c': 2}\n";
        let ix = KeyIndex::build(t).unwrap();
        let at = |p: &str| ix.find(p).map(|(p, full)| (p.line, p.column, full));
        assert_eq!(at("format"), Some((1, 1, true)));
        assert_eq!(at("meshes[0]"), Some((3, 5, true)));
        assert_eq!(at("meshes[0].cells"), Some((4, 5, true)));
        assert_eq!(at("meshes[1].cells"), Some((5, 15, true)));
        assert_eq!(at("quantities.q.values.b.c"), Some((8, 20, true)));
        // The longest prefix when the rest is not in the file.
        assert_eq!(at("quantities.q.values.z"), Some((8, 5, false)));
        assert_eq!(at("nothing"), None);
    }

    #[test]
    fn duplicates_everywhere_are_found() {
        let d = dup("a: 1\nb:\n  c: 1\n  c: 2\n");
        assert_eq!(d.path, "b.c");
        assert_eq!((d.first.line, d.second.line), (3, 4));
        assert!(d.message().contains("lines 3 and 4"), "{}", d.message());
        // Flow maps, on one line: the columns are named.
        let d = dup("a: {x: 1, x: 2}\n");
        assert_eq!(d.path, "a.x");
        assert_eq!((d.first.column, d.second.column), (5, 11));
        assert!(d.message().contains("columns 5 and 11"));
        // Quoted and plain spellings of one key.
        assert_eq!(dup("a: 1\n'a': 2\n").path, "a");
        assert_eq!(dup("a: 1\n\"a\": 2\n").path, "a");
        // Inside lists.
        assert_eq!(dup("l:\n  - {n: 1}\n  - {n: 1, n: 2}\n").path, "l[1].n");
        // A key given through an alias.
        assert_eq!(dup("k: &n q\nm: {q: 1, *n : 2}\n").path, "m.q");
        // The top level too.
        assert_eq!(dup("format: 1\nformat: 1\n").path, "format");
    }

    #[test]
    fn aliases_and_collections_as_keys_do_not_confuse_the_walk() {
        let t = "base: &b {x: 1, y: 2}\nother: *b\n? [k]\n: 1\nlast: {x: 3}\n";
        let ix = KeyIndex::build(t).unwrap();
        assert_eq!(ix.pos("last.x").map(|p| p.line), Some(5));
        assert_eq!(ix.pos("other").map(|p| p.line), Some(2));
        // Two uses of one anchored map are no duplicate.
        assert!(KeyIndex::build("a: &m {x: 1}\nb: *m\nc: *m\n").is_ok());
    }

    #[test]
    fn syntax_errors_are_left_to_the_reader() {
        assert_eq!(KeyIndex::build("a: [\n").unwrap_err(), IndexError::Syntax);
    }
}
