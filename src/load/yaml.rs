//! A YAML document as a tree of nodes that keep their line, and typed readers over it that
//! produce errors naming the file, the line and what was expected.
//!
//! serde-based YAML readers lose positions of values that deserialize fine, but data-quality
//! problems (an unreadable version string in record 40,000) must still name their line, so
//! the loaders read this tree instead.

use super::diag::{At, BadInput, closest};
use std::rc::Rc;
use yaml_rust2::parser::{Event, MarkedEventReceiver, Parser, Tag};
use yaml_rust2::scanner::{Marker, TScalarStyle};

/// Aliases may repeat a subtree; more expanded nodes than this is treated as an
/// alias-expansion attack rather than data (a registry of millions of versions stays far
/// below it per file: records are not repeated through aliases in practice).
pub const MAX_EXPANDED_NODES: u64 = 50_000_000;

/// One node of a YAML document.
#[derive(Debug)]
pub struct Node {
    pub line: usize,
    pub value: Value,
    /// Nodes this one stands for once every alias below it is expanded.
    expanded: u64,
}

#[derive(Debug)]
pub enum Value {
    Null,
    /// A scalar and whether it was quoted (a quoted scalar is always a string).
    Scalar(String, bool),
    Seq(Vec<Rc<Node>>),
    Map(Vec<(Rc<Node>, Rc<Node>)>),
}

impl Node {
    pub fn type_name(&self) -> &'static str {
        match &self.value {
            Value::Null => "nothing",
            Value::Scalar(..) => "a scalar",
            Value::Seq(_) => "a list",
            Value::Map(_) => "a mapping",
        }
    }

    pub fn is_null(&self) -> bool {
        matches!(self.value, Value::Null)
    }
}

enum Open {
    Seq(usize, Vec<Rc<Node>>, usize),
    Map(usize, Vec<Rc<Node>>, usize),
}

struct Builder<'p> {
    stack: Vec<Open>,
    anchors: Vec<Option<Rc<Node>>>,
    docs: Vec<Rc<Node>>,
    expanded_total: u64,
    error: Option<(usize, String)>,
    progress: Option<&'p Progress<'p>>,
    events: u32,
    /// The text's last line ([`line_count`]): no node or error lies beyond it.
    last_line: usize,
}

/// A bar that a parse advances by the position it has reached in the text, from `start`.
pub struct Progress<'p> {
    pub bar: &'p indicatif::ProgressBar,
    pub start: u64,
}

impl Builder<'_> {
    fn push_node(&mut self, node: Rc<Node>, anchor: usize) {
        if anchor > 0 {
            if self.anchors.len() <= anchor {
                self.anchors.resize(anchor + 1, None);
            }
            self.anchors[anchor] = Some(node.clone());
        }
        match self.stack.last_mut() {
            Some(Open::Seq(_, items, _)) | Some(Open::Map(_, items, _)) => items.push(node),
            None => self.docs.push(node),
        }
    }
}

fn is_null_scalar(text: &str, style: TScalarStyle, tag: &Option<Tag>) -> bool {
    if tag.as_ref().is_some_and(|t| t.suffix == "null") {
        return true;
    }
    style == TScalarStyle::Plain && matches!(text, "" | "~" | "null" | "Null" | "NULL")
}

impl MarkedEventReceiver for Builder<'_> {
    fn on_event(&mut self, ev: Event, mark: Marker) {
        if self.error.is_some() {
            return;
        }
        self.events = self.events.wrapping_add(1);
        if let Some(p) = self.progress
            && self.events.is_multiple_of(4096)
        {
            // A character position: at most the byte length the bar was sized with.
            p.bar.set_position(p.start + mark.index() as u64);
        }
        // yaml-rust2 reads the end of a text without a final line break as if one followed,
        // so the empty value of a record cut off there (`- ` as the last bytes) would name a
        // line after the last one.
        let line = mark.line().min(self.last_line);
        match ev {
            Event::Scalar(text, style, anchor, tag) => {
                let value = if is_null_scalar(&text, style, &tag) {
                    Value::Null
                } else {
                    Value::Scalar(text, style != TScalarStyle::Plain)
                };
                self.push_node(
                    Rc::new(Node {
                        line,
                        value,
                        expanded: 1,
                    }),
                    anchor,
                );
            }
            Event::SequenceStart(anchor, _) => self.stack.push(Open::Seq(line, Vec::new(), anchor)),
            Event::MappingStart(anchor, _) => self.stack.push(Open::Map(line, Vec::new(), anchor)),
            Event::SequenceEnd | Event::MappingEnd => {
                let Some(open) = self.stack.pop() else { return };
                let (node, anchor) = match open {
                    Open::Seq(line, items, anchor) => {
                        let expanded = 1 + items.iter().map(|n| n.expanded).sum::<u64>();
                        (
                            Node {
                                line,
                                value: Value::Seq(items),
                                expanded,
                            },
                            anchor,
                        )
                    }
                    Open::Map(line, items, anchor) => {
                        let expanded = 1 + items.iter().map(|n| n.expanded).sum::<u64>();
                        let mut pairs = Vec::with_capacity(items.len() / 2);
                        let mut it = items.into_iter();
                        while let (Some(k), Some(v)) = (it.next(), it.next()) {
                            pairs.push((k, v));
                        }
                        (
                            Node {
                                line,
                                value: Value::Map(pairs),
                                expanded,
                            },
                            anchor,
                        )
                    }
                };
                self.push_node(Rc::new(node), anchor);
            }
            Event::Alias(id) => {
                let Some(target) = self.anchors.get(id).cloned().flatten() else {
                    self.error = Some((line, "alias to an unknown anchor".into()));
                    return;
                };
                self.expanded_total = self.expanded_total.saturating_add(target.expanded);
                if self.expanded_total > MAX_EXPANDED_NODES || target.expanded > MAX_EXPANDED_NODES
                {
                    self.error = Some((
                        line,
                        format!(
                            "aliases expand to more than {MAX_EXPANDED_NODES} nodes \
                             (an alias-expansion bomb?); refusing to read further"
                        ),
                    ));
                    return;
                }
                self.push_node(target, 0);
            }
            _ => {}
        }
    }
}

/// Parses `text` as one YAML document. An empty document is an error: every input of
/// basefit has required content.
pub fn parse(file: &str, text: &str) -> Result<Rc<Node>, BadInput> {
    parse_showing(file, text, None)
}

/// [`parse`], advancing `progress` as the parser moves through the text.
pub fn parse_showing(
    file: &str,
    text: &str,
    progress: Option<&Progress<'_>>,
) -> Result<Rc<Node>, BadInput> {
    // Editors on Windows start UTF-8 files with a byte-order mark; yaml-rust2 would read it
    // as part of the first key.
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    // yaml-rust2 ends the stream at a NUL without an error, so whatever follows one would be
    // dropped without a word.
    if let Some(at) = text.find('\0') {
        let line = text[..at].matches('\n').count() + 1;
        return Err(BadInput::at(
            file,
            line,
            "found a NUL byte; a text file cannot hold a NUL byte (binary data?)",
        ));
    }
    let mut builder = Builder {
        stack: Vec::new(),
        anchors: Vec::new(),
        docs: Vec::new(),
        expanded_total: 0,
        error: None,
        progress,
        events: 0,
        last_line: line_count(text),
    };
    let mut parser = Parser::new_from_str(text);
    if let Err(e) = parser.load(&mut builder, true) {
        // As for nodes (`on_event`): an unclosed bracket in a truncated file.
        let line = e.marker().line().min(builder.last_line);
        return Err(BadInput::at(
            file,
            line,
            format!("not valid YAML: {}", e.info()),
        ));
    }
    if let Some((line, msg)) = builder.error {
        return Err(BadInput::at(file, line, msg));
    }
    match builder.docs.len() {
        0 => Err(BadInput::file(
            file,
            "the file is empty; expected a YAML mapping",
        )),
        1 => Ok(builder.docs.remove(0)),
        _ => Err(BadInput::at(
            file,
            builder.docs[1].line,
            "more than one YAML document; expected exactly one",
        )),
    }
}

/// Lines as YAML counts them (a line ends at LF, CRLF or a lone CR), counting the empty line
/// after a final line break, where an error at the end of the text is placed.
pub(crate) fn line_count(text: &str) -> usize {
    let bytes = text.as_bytes();
    let lone_cr = bytes
        .iter()
        .enumerate()
        .filter(|&(i, &b)| b == b'\r' && bytes.get(i + 1) != Some(&b'\n'))
        .count();
    bytes.iter().filter(|&&b| b == b'\n').count() + lone_cr + 1
}

/// Reading context: the file name, so every error can name it.
#[derive(Clone, Copy)]
pub struct Ctx<'a> {
    pub file: &'a str,
}

impl<'a> Ctx<'a> {
    pub fn err(&self, node: &Node, message: impl Into<String>) -> BadInput {
        BadInput::at(self.file, node.line, message)
    }

    pub fn str<'n>(&self, node: &'n Node, what: &str) -> Result<&'n str, BadInput> {
        match &node.value {
            Value::Scalar(s, _) => Ok(s),
            _ => Err(self.err(
                node,
                format!("{what}: expected text, found {}", node.type_name()),
            )),
        }
    }

    /// Text, or `None` when the node is null.
    pub fn opt_str<'n>(
        &self,
        node: Option<&'n Node>,
        what: &str,
    ) -> Result<Option<&'n str>, BadInput> {
        match node {
            None => Ok(None),
            Some(n) if n.is_null() => Ok(None),
            Some(n) => self.str(n, what).map(Some),
        }
    }

    pub fn bool(&self, node: &Node, what: &str) -> Result<bool, BadInput> {
        match &node.value {
            Value::Scalar(s, false) => plain_bool(s).ok_or_else(|| {
                self.err(
                    node,
                    format!("{what}: expected true or false (or y/n, yes/no, on/off), found `{s}`"),
                )
            }),
            Value::Scalar(s, true) => Err(self.err(
                node,
                format!(
                    "{what}: expected true or false, found {}",
                    quoted_found(s, plain_bool(s).is_some(), "true or false")
                ),
            )),
            _ => Err(self.err(
                node,
                format!("{what}: expected true or false, found {}", node.type_name()),
            )),
        }
    }

    pub fn number(&self, node: &Node, what: &str) -> Result<f64, BadInput> {
        match &node.value {
            Value::Scalar(s, false) => s
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| self.err(node, format!("{what}: expected a number, found `{s}`"))),
            Value::Scalar(s, true) => {
                let number = s.trim().parse::<f64>().is_ok_and(f64::is_finite);
                Err(self.err(
                    node,
                    format!(
                        "{what}: expected a number, found {}",
                        quoted_found(s, number, "a number")
                    ),
                ))
            }
            _ => Err(self.err(
                node,
                format!("{what}: expected a number, found {}", node.type_name()),
            )),
        }
    }

    pub fn seq<'n>(&self, node: &'n Node, what: &str) -> Result<&'n [Rc<Node>], BadInput> {
        match &node.value {
            Value::Seq(items) => Ok(items),
            Value::Null => Ok(&[]),
            _ => Err(self.err(
                node,
                format!("{what}: expected a list, found {}", node.type_name()),
            )),
        }
    }

    /// A list of strings; a single string is accepted as a list of one.
    pub fn str_list(&self, node: Option<&Node>, what: &str) -> Result<Vec<String>, BadInput> {
        let items = self.str_list_at(node, what)?;
        Ok(items.into_iter().map(|item| item.value).collect())
    }

    /// [`Ctx::str_list`] with the line of each item.
    pub fn str_list_at(
        &self,
        node: Option<&Node>,
        what: &str,
    ) -> Result<Vec<At<String>>, BadInput> {
        let Some(node) = node else {
            return Ok(Vec::new());
        };
        if let Value::Scalar(s, _) = &node.value {
            return Ok(vec![At::new(s.clone(), node.line)]);
        }
        self.seq(node, what)?
            .iter()
            .map(|n| self.str(n, what).map(|s| At::new(s.to_owned(), n.line)))
            .collect()
    }

    /// Opens a mapping whose keys must all be among `known`.
    pub fn map<'n>(
        &self,
        node: &'n Node,
        what: impl Into<std::borrow::Cow<'static, str>>,
        known: &'static [&'static str],
    ) -> Result<MapReader<'n, 'a>, BadInput> {
        let what = what.into();
        match &node.value {
            Value::Map(pairs) => {
                let mut entries = Vec::with_capacity(pairs.len());
                for (k, v) in pairs {
                    let key = match &k.value {
                        Value::Scalar(s, _) => s.as_str(),
                        _ => return Err(self.err(k, format!("{what}: keys must be text"))),
                    };
                    // A plain `<<` is YAML 1.1's merge key; yaml-rust2 reads it as an
                    // ordinary key, so "unknown field `<<`" would send the writer looking for
                    // a field of that name.
                    if matches!(&k.value, Value::Scalar(s, false) if s == "<<") {
                        return Err(self.err(
                            k,
                            format!(
                                "{what}: YAML merge keys (`<<: *anchor`) are not supported; \
                                 write the fields out"
                            ),
                        ));
                    }
                    if !known.contains(&key) {
                        let hint = closest(key, known)
                            .map(|c| format!("; did you mean `{c}`?"))
                            .unwrap_or_else(|| format!("; known fields: {}", known.join(", ")));
                        return Err(self.err(k, format!("{what}: unknown field `{key}`{hint}")));
                    }
                    if entries.iter().any(|(seen, _, _)| *seen == key) {
                        return Err(self.err(k, format!("{what}: field `{key}` given twice")));
                    }
                    entries.push((key, &**v, k.line));
                }
                Ok(MapReader {
                    ctx: *self,
                    node,
                    what,
                    entries,
                })
            }
            _ => Err(self.err(
                node,
                format!("{what}: expected a mapping, found {}", node.type_name()),
            )),
        }
    }
}

/// The booleans an unquoted scalar may spell: YAML 1.2's `true`/`false` in its three cases,
/// and the words YAML 1.1's boolean type also reads (`y`, `yes`, `on` and their negations, in
/// the same three cases; from memory of YAML 1.1's type repository). Many files are written
/// for 1.1 readers, and a flag field has no other reading of them; accepting `yes` but not
/// `on` read as arbitrary.
///
/// ```
/// use basefit::load::yaml::plain_bool;
/// assert_eq!(plain_bool("Off"), Some(false));
/// assert_eq!(plain_bool("oN"), None);
/// ```
pub fn plain_bool(text: &str) -> Option<bool> {
    // Spelled out rather than case-folded: a bulk registry reads this for every flag cell of
    // millions of rows, and `oN` is no YAML boolean.
    match text {
        "true" | "True" | "TRUE" | "y" | "Y" | "yes" | "Yes" | "YES" | "on" | "On" | "ON" => {
            Some(true)
        }
        "false" | "False" | "FALSE" | "n" | "N" | "no" | "No" | "NO" | "off" | "Off" | "OFF" => {
            Some(false)
        }
        _ => None,
    }
}

/// How a quoted scalar found where a number or a boolean was expected is named. Quoting
/// makes any scalar text, so `"5"` is not the number 5; the writer most likely meant the
/// value itself, and "found a scalar" would not say what to change.
fn quoted_found(text: &str, meant: bool, expected: &str) -> String {
    if meant {
        format!("the quoted text `{text:?}`; remove the quotes to write {expected}")
    } else {
        format!("the quoted text `{text:?}`")
    }
}

/// Field access on a mapping already checked for unknown keys.
pub struct MapReader<'n, 'a> {
    pub ctx: Ctx<'a>,
    pub node: &'n Node,
    /// What the map is, as messages about its fields begin: a record kind (`image`), or one
    /// record by name where its fields' names could read as names of records (`library
    /// `zlib`,`).
    what: std::borrow::Cow<'static, str>,
    /// Each key with its value and the key's own line: a value left empty in block style is
    /// placed by the YAML reader at the next token, which may be lines further on.
    entries: Vec<(&'n str, &'n Node, usize)>,
}

impl<'n> MapReader<'n, '_> {
    pub fn line(&self) -> usize {
        self.node.line
    }

    /// The field's node; a null value counts as absent.
    pub fn get(&self, key: &str) -> Option<&'n Node> {
        self.entries
            .iter()
            .find(|(k, _, _)| *k == key)
            .map(|(_, v, _)| *v)
            .filter(|v| !v.is_null())
    }

    pub fn required(&self, key: &str) -> Result<&'n Node, BadInput> {
        self.get(key).ok_or_else(|| {
            self.ctx.err(
                self.node,
                format!("{}: missing required field `{key}`", self.what),
            )
        })
    }

    pub fn required_str(&self, key: &str) -> Result<&'n str, BadInput> {
        let node = self.required(key)?;
        self.ctx.str(node, &format!("{} `{key}`", self.what))
    }

    pub fn opt_str(&self, key: &str) -> Result<Option<&'n str>, BadInput> {
        self.ctx
            .opt_str(self.get(key), &format!("{} `{key}`", self.what))
    }

    /// [`MapReader::required_str`] with the line of the value.
    pub fn required_str_at(&self, key: &str) -> Result<At<&'n str>, BadInput> {
        let node = self.required(key)?;
        let text = self.ctx.str(node, &format!("{} `{key}`", self.what))?;
        Ok(At::new(text, node.line))
    }

    /// [`MapReader::opt_str`] with the line of the value.
    pub fn opt_str_at(&self, key: &str) -> Result<Option<At<&'n str>>, BadInput> {
        let node = self.get(key);
        let text = self.opt_str(key)?;
        Ok(text.zip(node).map(|(t, n)| At::new(t, n.line)))
    }

    /// [`MapReader::opt_str_at`], except that a key written without a value (`runtime: ~`,
    /// `runtime: null`, `runtime:`) reads as empty text rather than as absent: for a
    /// requirement, whose loaders note empty text (`empty-requirement`) since an export that
    /// lost the value reads so, and one may write a null as well as `""`.
    pub fn opt_text_at(&self, key: &str) -> Result<Option<At<&'n str>>, BadInput> {
        // `get` reads a null as absent. A null is placed at its key's line: one written as
        // nothing at all (`runtime:` at a line's end) has no place of its own.
        match self.entries.iter().find(|(k, _, _)| *k == key) {
            Some((_, node, key_line)) if node.is_null() => Ok(Some(At::new("", *key_line))),
            _ => self.opt_str_at(key),
        }
    }

    /// [`MapReader::opt_number`] with the line of the value.
    pub fn opt_number_at(&self, key: &str) -> Result<Option<At<f64>>, BadInput> {
        let node = self.get(key);
        let value = self.opt_number(key)?;
        Ok(value.zip(node).map(|(v, n)| At::new(v, n.line)))
    }

    /// [`MapReader::opt_bool`] with the line of the value.
    pub fn opt_bool_at(&self, key: &str) -> Result<Option<At<bool>>, BadInput> {
        let node = self.get(key);
        let value = self.opt_bool(key)?;
        Ok(value.zip(node).map(|(v, n)| At::new(v, n.line)))
    }

    pub fn opt_bool(&self, key: &str) -> Result<Option<bool>, BadInput> {
        self.get(key)
            .map(|n| self.ctx.bool(n, &format!("{} `{key}`", self.what)))
            .transpose()
    }

    pub fn opt_number(&self, key: &str) -> Result<Option<f64>, BadInput> {
        self.get(key)
            .map(|n| self.ctx.number(n, &format!("{} `{key}`", self.what)))
            .transpose()
    }

    pub fn str_list(&self, key: &str) -> Result<Vec<String>, BadInput> {
        self.ctx
            .str_list(self.get(key), &format!("{} `{key}`", self.what))
    }

    /// [`MapReader::str_list`] with the line of each item.
    pub fn str_list_at(&self, key: &str) -> Result<Vec<At<String>>, BadInput> {
        self.ctx
            .str_list_at(self.get(key), &format!("{} `{key}`", self.what))
    }

    pub fn seq(&self, key: &str) -> Result<&'n [Rc<Node>], BadInput> {
        match self.get(key) {
            None => Ok(&[]),
            Some(n) => self.ctx.seq(n, &format!("{} `{key}`", self.what)),
        }
    }
}

/// Runs `read` over every item, collecting schema errors so one run reports many.
pub fn collect_errors<'n, T>(
    items: &'n [Rc<Node>],
    mut read: impl FnMut(&'n Node) -> Result<T, BadInput>,
) -> Result<Vec<T>, BadInput> {
    let mut errors = super::diag::SchemaErrors::new();
    let out: Vec<T> = items
        .iter()
        .filter_map(|item| errors.keep(read(item)))
        .collect();
    errors.finish().map(|_| out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_are_kept() {
        let doc = parse("t.yaml", "a: 1\nb:\n  - x\n  - y\n").unwrap();
        let ctx = Ctx { file: "t.yaml" };
        let m = ctx.map(&doc, "top", &["a", "b"]).unwrap();
        let items = m.seq("b").unwrap();
        assert_eq!(items[1].line, 4);
    }

    #[test]
    fn unknown_field_suggests() {
        let doc = parse("t.yaml", "nmae: x\n").unwrap();
        let ctx = Ctx { file: "t.yaml" };
        let err = ctx
            .map(&doc, "package", &["name", "versions"])
            .err()
            .unwrap();
        assert_eq!(
            err.to_string(),
            "t.yaml:1: package: unknown field `nmae`; did you mean `name`?"
        );
    }

    #[test]
    fn an_error_at_the_end_of_a_truncated_text_names_its_last_line() {
        for (text, line) in [
            // Cut off inside a flow sequence, with and without the final line break.
            ("packages:\n  - name: [unclosed", 2),
            ("packages:\n  - name: [unclosed\n", 3),
            ("packages:\r\n  - {name: a", 2),
            ("a: [", 1),
        ] {
            let err = parse("cut.yaml", text).unwrap_err();
            assert_eq!(err.line, Some(line), "{text:?}: {err}");
        }
        // A list item cut off after its dash is an empty node on the last line.
        let doc = parse("cut.yaml", "a:\n  - x\n  - ").unwrap();
        let ctx = Ctx { file: "cut.yaml" };
        let items = ctx.map(&doc, "top", &["a"]).unwrap().seq("a").unwrap();
        assert_eq!(items[1].line, 3);
    }

    #[test]
    fn alias_bomb_is_refused() {
        let mut text = String::from("a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
        for i in 1..12 {
            let p = i - 1;
            text.push_str(&format!(
                "a{i}: &a{i} [*a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}]\n"
            ));
        }
        let err = parse("bomb.yaml", &text).unwrap_err();
        assert!(err.message.contains("alias-expansion"), "{err}");
    }
}
