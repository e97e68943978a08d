//! CSV tables with named columns: every reader of CSV input goes through here, so unknown
//! and missing columns are reported alike everywhere.

use super::diag::{BadInput, closest};
use std::path::Path;

/// A CSV file read with its header checked against the known columns.
pub struct Table {
    pub file: String,
    /// Size of the input in bytes when it is a file: lets readers size their buffers once.
    pub byte_len: Option<u64>,
    /// The header's 1-based line: problems with the columns are reported there.
    pub header_line: usize,
    columns: Vec<String>,
    reader: csv::Reader<CountingInput<Box<dyn std::io::Read + Send>>>,
}

/// The input as the csv crate reads it, with what [`Table::next_into`] needs to tell whether
/// a record ended with a line break (only the last record of a file can end without one) and
/// whether the file ended inside a quoted cell.
struct CountingInput<R> {
    input: R,
    delivered: u64,
    last: Option<u8>,
    /// The last byte read that is not white space: a closing quote when the file's last cell
    /// was quoted and closed.
    last_visible: Option<u8>,
    ended: bool,
    /// The first bytes, held until they show whether the file starts with a UTF-8 byte-order
    /// mark (dropped, as editors on Windows write one); `None` once that is settled. The csv
    /// crate drops one only when its first read holds all three bytes, which a pipe need not
    /// deliver.
    head: Option<Vec<u8>>,
    /// Where the bytes delivered so far leave the quoting of the current cell.
    quoting: Quoting,
    /// Text that follows a quoted cell's closing quote before the next `,` or line end.
    stray: std::collections::VecDeque<Stray>,
    /// Line feeds delivered before the bytes [`CountingInput::follow_quotes`] has reached.
    breaks: usize,
    /// The line of the opening quote of the quoted cell being delivered (or last delivered).
    opened_line: usize,
}

/// Text after a closing quote, as [`CountingInput::follow_quotes`] finds it.
#[derive(Clone, Copy)]
struct Stray {
    /// Offset in the bytes delivered.
    at: u64,
    /// The byte found there.
    byte: u8,
    /// The 1-based lines of the quoted cell's opening quote and of the stray byte (so of its
    /// closing quote): apart when a quote left open ran on to a later quote.
    opened_line: usize,
    line: usize,
}

/// The quoting state of the cell being delivered, as RFC 4180 reads it: a quote opens a quoted
/// cell only as the cell's first byte, and a quoted cell ends at its closing quote.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Quoting {
    /// At the first byte of a cell.
    CellStart,
    /// Inside a cell that did not start with a quote (a quote there is ordinary text).
    Plain,
    /// Inside a quoted cell.
    Quoted,
    /// A quote inside a quoted cell: the closing one, or the first of a doubled pair.
    QuoteInQuoted,
    /// After a closing quote and white space only.
    Closed,
}

const BYTE_ORDER_MARK: &[u8] = b"\xEF\xBB\xBF";

impl<R: std::io::Read> CountingInput<R> {
    fn new(input: R) -> CountingInput<R> {
        CountingInput {
            input,
            delivered: 0,
            last: None,
            last_visible: None,
            ended: false,
            head: Some(Vec::new()),
            quoting: Quoting::CellStart,
            stray: std::collections::VecDeque::new(),
            breaks: 0,
            opened_line: 1,
        }
    }

    /// The 1-based line of `bytes[at]`, counting the line feeds of `bytes` from `counted`
    /// (moved to `at`) into [`CountingInput::breaks`], so each byte is counted once.
    fn line_at(&mut self, bytes: &[u8], counted: &mut usize, at: usize) -> usize {
        self.breaks += memchr::memchr_iter(b'\n', &bytes[*counted..at]).count();
        *counted = at;
        self.breaks + 1
    }

    /// Follows the quoting of `bytes`, which start at offset `base` of the bytes delivered,
    /// and notes text after a closing quote. The csv crate reads `"kp-a"x` as `kp-ax`, one
    /// cell, and `"1.0".1` as `1.0.1`, without a word: a record silently read otherwise than
    /// written, which RFC 4180 has no reading for.
    fn follow_quotes(&mut self, base: u64, bytes: &[u8]) {
        let mut counted = 0;
        self.follow_quotes_counting(base, bytes, &mut counted);
        self.line_at(bytes, &mut counted, bytes.len());
    }

    /// [`CountingInput::follow_quotes`], with the line feeds of `bytes` before `counted`
    /// already counted.
    fn follow_quotes_counting(&mut self, base: u64, bytes: &[u8], counted: &mut usize) {
        let mut i = 0;
        while i < bytes.len() {
            match self.quoting {
                Quoting::CellStart | Quoting::Plain => {
                    let Some(p) = memchr::memchr(b'"', &bytes[i..]) else {
                        self.quoting = match bytes.last() {
                            Some(b',' | b'\n') => Quoting::CellStart,
                            _ => Quoting::Plain,
                        };
                        return;
                    };
                    let at = i + p;
                    let starts_cell = if at == i {
                        self.quoting == Quoting::CellStart
                    } else {
                        matches!(bytes[at - 1], b',' | b'\n')
                    };
                    self.quoting = if starts_cell {
                        self.opened_line = self.line_at(bytes, counted, at);
                        Quoting::Quoted
                    } else {
                        Quoting::Plain
                    };
                    i = at + 1;
                }
                Quoting::Quoted => match memchr::memchr(b'"', &bytes[i..]) {
                    None => return,
                    Some(p) => {
                        self.quoting = Quoting::QuoteInQuoted;
                        i += p + 1;
                    }
                },
                Quoting::QuoteInQuoted | Quoting::Closed => {
                    let b = bytes[i];
                    self.quoting = match b {
                        b'"' if self.quoting == Quoting::QuoteInQuoted => Quoting::Quoted,
                        b',' | b'\n' => Quoting::CellStart,
                        b' ' | b'\t' | b'\r' => Quoting::Closed,
                        _ => {
                            let stray = Stray {
                                at: base + i as u64,
                                byte: b,
                                opened_line: self.opened_line,
                                line: self.line_at(bytes, counted, i),
                            };
                            self.stray.push_back(stray);
                            Quoting::Plain
                        }
                    };
                    i += 1;
                }
            }
        }
    }

    /// Reads into `buf` past a leading byte-order mark.
    fn read_past_mark(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let Some(head) = &mut self.head else {
            return self.input.read(buf);
        };
        while head.len() < BYTE_ORDER_MARK.len() && BYTE_ORDER_MARK.starts_with(head) {
            let mut byte = [0u8; 1];
            if self.input.read(&mut byte)? == 0 {
                break;
            }
            head.push(byte[0]);
        }
        if head.as_slice() == BYTE_ORDER_MARK {
            head.clear();
        }
        if head.is_empty() {
            self.head = None;
            return self.input.read(buf);
        }
        let n = head.len().min(buf.len());
        buf[..n].copy_from_slice(&head[..n]);
        head.drain(..n);
        if head.is_empty() {
            self.head = None;
        }
        Ok(n)
    }
}

impl<R: std::io::Read> std::io::Read for CountingInput<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.read_past_mark(buf)?;
        if n == 0 && !buf.is_empty() {
            self.ended = true;
        }
        if let Some(&b) = buf[..n].last() {
            self.last = Some(b);
        }
        if let Some(&b) = buf[..n].iter().rev().find(|b| !b.is_ascii_whitespace()) {
            self.last_visible = Some(b);
        }
        self.follow_quotes(self.delivered, &buf[..n]);
        self.delivered += n as u64;
        Ok(n)
    }
}

/// The csv crate reads an unclosed quote to the end of the file, so every line after it
/// would vanish into one cell uncounted.
fn unclosed_quote(file: &str, line: usize) -> BadInput {
    BadInput::at(
        file,
        line,
        "a quoted cell in this row is never closed: every line after it would be read into \
         that cell (a `\"` missing, or one that should have been doubled)",
    )
}

/// One data row and its 1-based line in the file.
pub struct Row {
    pub line: usize,
    pub record: csv::StringRecord,
}

/// A data row read into a buffer that is reused from row to row, for files of millions of
/// rows: reading it allocates nothing once the buffer has grown to the longest row, and its
/// text is checked for UTF-8 once per row rather than once per cell.
///
/// ```
/// use basefit::load::table::{RowBuf, Table};
/// let text = "name,flag\n pkg-a ,yes\n";
/// let mut table = Table::from_reader("t.csv", Box::new(text.as_bytes()), &["name", "flag"], &["name"])
///     .unwrap();
/// let mut row = RowBuf::default();
/// assert!(table.next_into(&mut row).unwrap());
/// assert_eq!((row.line, &row.record[0]), (2, " pkg-a "));
/// assert!(!table.next_into(&mut row).unwrap());
/// ```
#[derive(Debug, Default)]
pub struct RowBuf {
    pub line: usize,
    pub record: csv::StringRecord,
}

/// A record as [`Table::next_shaped`] reads it.
enum Shaped {
    Row,
    /// A blank line, which is skipped.
    Blank,
    /// Another number of fields than the header.
    Misshapen(BadInput),
    End,
}

/// Rows read ahead by [`Table::for_each_batch`], their cells packed end to end in one
/// buffer: the thread that works on them then reads memory in order, rather than chasing
/// each row's own buffers that another thread wrote.
#[derive(Default)]
pub struct Batch {
    text: String,
    /// Per cell, where it ends in `text`; every row has the header's number of cells.
    ends: Vec<usize>,
    lines: Vec<usize>,
    width: usize,
    /// Rows with another number of fields than the header, each with the number of good
    /// rows before it in this batch, so they come out in file order.
    misshapen: Vec<(usize, BadInput)>,
}

impl Batch {
    fn clear(&mut self) {
        self.text.clear();
        self.ends.clear();
        self.lines.clear();
        self.misshapen.clear();
    }

    fn push(&mut self, row: &RowBuf) {
        for cell in row.record.iter() {
            self.text.push_str(cell);
            self.ends.push(self.text.len());
        }
        self.lines.push(row.line);
    }

    /// Rows and misshapen rows.
    pub fn len(&self) -> usize {
        self.lines.len() + self.misshapen.len()
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The rows in file order; a row with another number of fields than the header comes as
    /// its error, so reading goes on past it and every such row is reported.
    pub fn rows(&self) -> impl Iterator<Item = Result<RowRef<'_>, &BadInput>> {
        let mut misshapen = self.misshapen.iter().peekable();
        let mut good = 0..self.lines.len();
        std::iter::from_fn(move || {
            if let Some((_, e)) = misshapen.next_if(|(before, _)| *before == good.start) {
                return Some(Err(e));
            }
            let i = good.next()?;
            Some(Ok(RowRef {
                line: self.lines[i],
                text: &self.text,
                ends: &self.ends[i * self.width..(i + 1) * self.width],
                start: match i {
                    0 => 0,
                    _ => self.ends[i * self.width - 1],
                },
            }))
        })
    }
}

/// One row of a [`Batch`] and its 1-based line in the file.
///
/// ```
/// use basefit::load::table::Table;
/// use std::ops::ControlFlow;
/// let text = "name,flag\n pkg-a ,yes\n";
/// let table = Table::from_reader("t.csv", Box::new(text.as_bytes()), &["name", "flag"], &["name"])
///     .unwrap();
/// let (name, flag) = (table.column("name"), table.column("flag"));
/// table
///     .for_each_batch(|batch| {
///         let row = batch.rows().next().unwrap().unwrap();
///         assert_eq!(row.line, 2);
///         assert_eq!(row.text(name), Some("pkg-a"));
///         assert_eq!(row.flag("t.csv", flag, "flag").unwrap(), Some(true));
///         ControlFlow::Continue(())
///     })
///     .unwrap();
/// ```
#[derive(Clone, Copy)]
pub struct RowRef<'b> {
    pub line: usize,
    text: &'b str,
    ends: &'b [usize],
    start: usize,
}

/// Reads a true/false cell. CSV exports spell booleans many ways; the words a YAML flag
/// reads are accepted ([`crate::load::yaml::plain_bool`]), and `1`/`0` and `t`/`f` as SQL
/// exports write them.
///
/// ```
/// use basefit::load::table::parse_flag;
/// assert_eq!(parse_flag("t"), Some(true));
/// assert_eq!(parse_flag("FALSE"), Some(false));
/// assert_eq!(parse_flag("On"), Some(true));
/// assert_eq!(parse_flag("maybe"), None);
/// ```
pub fn parse_flag(text: &str) -> Option<bool> {
    match text {
        "1" | "t" => Some(true),
        "0" | "f" => Some(false),
        _ => crate::load::yaml::plain_bool(text),
    }
}

impl<'b> RowRef<'b> {
    /// The trimmed cell in column `index`; `None` when the column is absent or the cell is
    /// empty.
    pub fn text(&self, index: Option<usize>) -> Option<&'b str> {
        let i = index?;
        let end = *self.ends.get(i)?;
        let start = match i {
            0 => self.start,
            _ => self.ends[i - 1],
        };
        self.text
            .get(start..end)
            .map(trim)
            .filter(|s| !s.is_empty())
    }

    /// A true/false cell named `column` in messages; `None` when absent or empty.
    pub fn flag(
        &self,
        file: &str,
        index: Option<usize>,
        column: &str,
    ) -> Result<Option<bool>, BadInput> {
        match self.text(index) {
            None => Ok(None),
            Some(text) => parse_flag(text).map(Some).ok_or_else(|| {
                BadInput::at(
                    file,
                    self.line,
                    format!("`{column}`: expected true or false, found `{text}`"),
                )
            }),
        }
    }
}

/// `str::trim`, without its Unicode scan for the common cell that has nothing to trim.
fn trim(s: &str) -> &str {
    match (s.as_bytes().first(), s.as_bytes().last()) {
        (Some(&a), Some(&b)) if a > b' ' && a < 0x80 && b > b' ' && b < 0x80 => s,
        _ => s.trim(),
    }
}

impl Table {
    /// Opens `path`, checking that every column is known and every required one present.
    pub fn open(
        path: &Path,
        known: &[&'static str],
        required: &[&'static str],
    ) -> Result<Table, BadInput> {
        Self::open_showing(path, known, required, None)
    }

    /// [`Table::open`], advancing `progress` by every byte read from the file.
    pub fn open_showing(
        path: &Path,
        known: &[&'static str],
        required: &[&'static str],
        progress: Option<&indicatif::ProgressBar>,
    ) -> Result<Table, BadInput> {
        let file = path.display().to_string();
        let handle = super::diag::open_input(path)?;
        let byte_len = handle.metadata().ok().map(|m| m.len());
        let input: Box<dyn std::io::Read + Send> = match progress {
            Some(bar) => Box::new(bar.wrap_read(handle)),
            None => Box::new(handle),
        };
        let mut table = Self::from_reader(
            &file,
            Box::new(std::io::BufReader::with_capacity(1 << 20, input)),
            known,
            required,
        )?;
        table.byte_len = byte_len;
        Ok(table)
    }

    pub fn from_reader(
        file: &str,
        input: Box<dyn std::io::Read + Send>,
        known: &[&'static str],
        required: &[&'static str],
    ) -> Result<Table, BadInput> {
        // Rows end at `\n` only, with a `\r` before it trimmed off as white space: with the
        // csv crate's CRLF mode the line it reports for each row of a CRLF file is one short.
        // Field counts are checked here rather than by the crate, so a blank CRLF line (one
        // field holding `\r`) can be skipped like a blank LF line.
        let reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .terminator(csv::Terminator::Any(b'\n'))
            .from_reader(CountingInput::new(input));
        let mut table = Table {
            file: file.to_string(),
            byte_len: None,
            header_line: 1,
            columns: Vec::new(),
            reader,
        };
        // Read as a record, not through the crate's header handling, so that blank lines
        // before it (a CRLF one holds a lone `\r`) are skipped as rows are, and its line is
        // counted as a row's is: problems with the columns are reported there.
        let mut header_record = csv::StringRecord::new();
        loop {
            if !table
                .reader
                .read_record(&mut header_record)
                .map_err(|e| csv_error(file, e))?
            {
                header_record.clear();
                break;
            }
            let unclosed = table.ends_in_open_quote(&header_record);
            table.header_line = table.first_line(&header_record, unclosed);
            if unclosed {
                return Err(unclosed_quote(file, table.header_line));
            }
            if let Some(e) = table.stray_text(&header_record, table.header_line) {
                return Err(e);
            }
            if header_record.len() != 1 || !header_record[0].trim().is_empty() {
                break;
            }
        }
        let header_line = table.header_line;
        let headers = header_record
            .iter()
            .map(|h| h.trim().to_string())
            .collect::<Vec<_>>();
        // Three ways to have no column names, each told apart: pointing at line 1 of a file
        // of blank lines, or of a header of empty cells further down, sends the reader to a
        // line that holds nothing to fix.
        let expected = format!("expected a header line with columns {}", required.join(","));
        if header_record.is_empty() {
            // The csv crate skips blank LF lines without handing them over, so whether the
            // file had lines at all is told by the bytes read.
            return Err(if table.reader.get_ref().delivered > 0 {
                // No line is named: every line is blank and none is the one to fix.
                BadInput::file(
                    file,
                    format!("the file holds no header, only blank lines; {expected}"),
                )
            } else {
                BadInput::at(file, 1, format!("the file is empty; {expected}"))
            });
        }
        if headers.iter().all(|h| h.is_empty()) {
            return Err(BadInput::at(
                file,
                header_line,
                format!("the header has no column names, only empty cells; {expected}"),
            ));
        }
        for h in &headers {
            if !known.contains(&h.as_str()) {
                // A file whose lines end in a lone `\r` is one line to a reader that ends
                // lines at `\n`: its header runs into the rows, and a column named after the
                // closest known one would hide why.
                if h.contains('\r') {
                    return Err(BadInput::at(
                        file,
                        header_line,
                        format!(
                            "unknown column `{h}`: the header holds a carriage return, so the \
                             file's lines seem to end in `\\r` alone; lines must end in `\\n` \
                             or `\\r\\n`"
                        ),
                    ));
                }
                let hint = closest(h, known)
                    .map(|c| format!("; did you mean `{c}`?"))
                    .unwrap_or_else(|| format!("; known columns: {}", known.join(", ")));
                return Err(BadInput::at(
                    file,
                    header_line,
                    format!("unknown column `{h}`{hint}"),
                ));
            }
        }
        for (i, h) in headers.iter().enumerate() {
            if headers[..i].contains(h) {
                return Err(BadInput::at(
                    file,
                    header_line,
                    format!("column `{h}` appears twice"),
                ));
            }
        }
        for r in required {
            if !headers.iter().any(|h| h == r) {
                return Err(BadInput::at(
                    file,
                    header_line,
                    format!("missing required column `{r}`"),
                ));
            }
        }
        table.columns = headers;
        Ok(table)
    }

    /// The position of a column, if the file has it.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|c| c == name)
    }

    /// Reads the next row into `row`; `false` at the end of the file.
    pub fn next_into(&mut self, row: &mut RowBuf) -> Result<bool, BadInput> {
        loop {
            match self.next_shaped(row)? {
                Shaped::End => return Ok(false),
                Shaped::Row => return Ok(true),
                Shaped::Blank => {}
                Shaped::Misshapen(e) => return Err(e),
            }
        }
    }

    /// The next record, told apart by its shape; an error here is one reading cannot go on
    /// past (text that is no CSV, an unclosed quote).
    fn next_shaped(&mut self, row: &mut RowBuf) -> Result<Shaped, BadInput> {
        match self.reader.read_record(&mut row.record) {
            Ok(false) => Ok(Shaped::End),
            Ok(true) => {
                let unclosed = self.ends_in_open_quote(&row.record);
                row.line = self.first_line(&row.record, unclosed);
                if unclosed {
                    return Err(unclosed_quote(&self.file, row.line));
                }
                if let Some(e) = self.stray_text(&row.record, row.line) {
                    return Ok(Shaped::Misshapen(e));
                }
                Ok(match self.check_width(&row.record, row.line) {
                    Ok(true) => Shaped::Blank,
                    Ok(false) => Shaped::Row,
                    Err(e) => Shaped::Misshapen(e),
                })
            }
            Err(e) => Err(csv_error(&self.file, e)),
        }
    }

    /// The line a record starts on. The csv crate gives the first record after blank LF lines
    /// the line of the first blank one (it skips them itself), but it counts every line break
    /// it reads: the breaks between where it started and where it stopped are the skipped
    /// blank lines, the breaks inside quoted cells and the one ending the record.
    /// `unclosed`: the record ran to the end of the file inside a quote, so it has no line
    /// break of its own whatever its text ends with.
    fn first_line(&self, record: &csv::StringRecord, unclosed: bool) -> usize {
        let start = line_of(record);
        let end = self.reader.position();
        let input = self.reader.get_ref();
        let ends_file =
            unclosed || (input.ended && end.byte() == input.delivered && input.last != Some(b'\n'));
        let breaks = (end.line() as usize).saturating_sub(start);
        let beyond = breaks.saturating_sub(usize::from(!ends_file));
        if beyond == 0 {
            return start;
        }
        let inside = record.as_slice().bytes().filter(|&b| b == b'\n').count();
        start + beyond.saturating_sub(inside)
    }

    /// Whether `record` ran to the end of the file inside a quoted cell. Only a quoted cell
    /// holds a line feed (a carriage return is ordinary text to a reader that ends lines at
    /// `\n`), and one that was closed leaves its quote as the file's last visible byte; an
    /// unclosed one ends the file with its own text.
    fn ends_in_open_quote(&self, record: &csv::StringRecord) -> bool {
        let input = self.reader.get_ref();
        input.ended
            && self.reader.position().byte() == input.delivered
            && record
                .iter()
                .next_back()
                .is_some_and(|cell| cell.contains('\n'))
            && input.last_visible != Some(b'"')
    }

    /// Text after a closing quote within `record`, which the csv crate would have joined to
    /// the quoted text: an error at the record's line, since the cell it gives is not the one
    /// written. Reading goes on past it.
    fn stray_text(&mut self, record: &csv::StringRecord, line: usize) -> Option<BadInput> {
        let start = record.position().map_or(0, |p| p.byte());
        let end = self.reader.position().byte();
        let stray = &mut self.reader.get_mut().stray;
        while stray.front().is_some_and(|s| s.at < start) {
            stray.pop_front();
        }
        let mut first = None;
        while let Some(&s) = stray.front() {
            if s.at >= end {
                break;
            }
            first.get_or_insert(s);
            stray.pop_front();
        }
        let Stray {
            byte,
            opened_line,
            line: closed_line,
            ..
        } = first?;
        let shown = if byte.is_ascii_graphic() {
            format!("`{}`", byte as char)
        } else {
            format!("byte 0x{byte:02x}")
        };
        // A quote left open mid-file runs on to the next `"` in the file, which then reads as
        // its closing quote: the reader, looking at this line, sees no closing quote at all,
        // so say where the cell ended and what most likely happened. Only that cell's own
        // lines tell: another cell of the row may span lines as written.
        let spanned = if closed_line <= opened_line {
            String::new()
        } else {
            let opened = if opened_line == line {
                "this line".to_string()
            } else {
                format!("line {opened_line}")
            };
            format!(
                " (a quoted cell opened on {opened} runs on to line {closed_line}, where the \
                 quote that closes it stands: most likely a `\"` is missing on {opened}, or one \
                 should have been doubled)"
            )
        };
        Some(BadInput::at(
            &self.file,
            line,
            format!(
                "text ({shown}) follows the closing quote of a quoted cell{spanned}: a quoted \
                 cell ends at its closing quote (RFC 4180), and reading on would join the two \
                 into a value never written (`\"kp-a\"x` as `kp-ax`); quote the whole cell, \
                 with `\"\"` for a quote inside it"
            ),
        ))
    }

    /// Checks that a row has as many fields as the header; `Ok(true)` for a blank line, which
    /// is skipped.
    fn check_width(&self, record: &csv::StringRecord, line: usize) -> Result<bool, BadInput> {
        // Checked before the width: in a one-column table a blank CRLF line is one field, the
        // header's width, and would otherwise be read as a row with an empty cell.
        if record.len() == 1 && record[0].trim().is_empty() {
            return Ok(true);
        }
        if record.len() == self.columns.len() {
            return Ok(false);
        }
        Err(BadInput::at(
            &self.file,
            line,
            format!(
                "expected {} fields as in the header, found {}",
                self.columns.len(),
                record.len()
            ),
        ))
    }

    /// Reads every row on a second thread and hands them to `each` in batches, in file order,
    /// so parsing overlaps with the caller's work on the rows. `each` may stop early with
    /// `ControlFlow::Break`. A row with another number of fields than the header comes in its
    /// batch as an error, and reading goes on; any other CSV error ends the reading after the
    /// rows before it were handed over, as reading row by row would.
    ///
    /// ```
    /// use basefit::load::table::Table;
    /// use std::ops::ControlFlow;
    /// let text = "name,kind\na,x\nb\nc,y\nd,z,w\n";
    /// let table =
    ///     Table::from_reader("t.csv", Box::new(text.as_bytes()), &["name", "kind"], &["name"]).unwrap();
    /// let mut lines = Vec::new();
    /// table
    ///     .for_each_batch(|batch| {
    ///         lines.extend(batch.rows().map(|r| r.map(|r| r.line).map_err(|e| e.to_string())));
    ///         ControlFlow::Continue(())
    ///     })
    ///     .unwrap();
    /// assert_eq!(
    ///     lines,
    ///     [
    ///         Ok(2),
    ///         Err("t.csv:3: expected 2 fields as in the header, found 1".to_string()),
    ///         Ok(4),
    ///         Err("t.csv:5: expected 2 fields as in the header, found 3".to_string()),
    ///     ]
    /// );
    /// ```
    pub fn for_each_batch(
        mut self,
        mut each: impl FnMut(&Batch) -> std::ops::ControlFlow<()>,
    ) -> Result<(), BadInput> {
        use std::sync::mpsc;
        const BATCH: usize = 2048;
        // Full batches go one way and emptied ones come back, so buffers are not reallocated.
        let (full_tx, full_rx) = mpsc::sync_channel::<Batch>(4);
        let (empty_tx, empty_rx) = mpsc::channel::<Batch>();
        let file = self.file.clone();
        let width = self.columns.len();
        std::thread::scope(|scope| {
            let reader = scope.spawn(move || -> Result<(), BadInput> {
                let mut row = RowBuf::default();
                loop {
                    let mut batch = empty_rx.try_recv().unwrap_or_default();
                    batch.clear();
                    batch.width = width;
                    let mut outcome = Ok(true);
                    while batch.len() < BATCH {
                        match self.next_shaped(&mut row) {
                            Ok(Shaped::Row) => batch.push(&row),
                            Ok(Shaped::Blank) => {}
                            Ok(Shaped::Misshapen(e)) => {
                                batch.misshapen.push((batch.lines.len(), e));
                            }
                            Ok(Shaped::End) => {
                                outcome = Ok(false);
                                break;
                            }
                            Err(e) => {
                                outcome = Err(e);
                                break;
                            }
                        }
                    }
                    if !batch.is_empty() && full_tx.send(batch).is_err() {
                        return Ok(()); // The caller stopped early.
                    }
                    match outcome {
                        Ok(true) => {}
                        Ok(false) => return Ok(()),
                        Err(e) => return Err(e),
                    }
                }
            });
            for batch in full_rx.iter() {
                if each(&batch).is_break() {
                    break;
                }
                let _ = empty_tx.send(batch);
            }
            drop(full_rx);
            reader
                .join()
                .unwrap_or_else(|_| Err(BadInput::file(file, "the reading thread failed")))
        })
    }

    /// The next row with the header's number of fields, or `None` at the end of the file. A
    /// row with another number goes to `errors` and reading goes on; an error reading cannot
    /// go on past (text that is not CSV or UTF-8) goes there too and ends the rows.
    ///
    /// ```
    /// use basefit::load::{diag::SchemaErrors, table::Table};
    /// let text = "name,weight\na,1\nb\nc,2,x\nd,3\n";
    /// let mut table =
    ///     Table::from_reader("t.csv", Box::new(text.as_bytes()), &["name", "weight"], &["name"]).unwrap();
    /// let mut errors = SchemaErrors::new();
    /// let mut lines = Vec::new();
    /// while let Some(row) = table.next_row_collecting(&mut errors) {
    ///     lines.push(row.line);
    /// }
    /// assert_eq!(lines, [2, 5]);
    /// let err = errors.finish().unwrap_err().to_string();
    /// assert_eq!(
    ///     err,
    ///     "t.csv:3: expected 2 fields as in the header, found 1\n\
    ///      t.csv:4: expected 2 fields as in the header, found 3"
    /// );
    /// ```
    pub fn next_row_collecting(&mut self, errors: &mut super::diag::SchemaErrors) -> Option<Row> {
        let mut row = RowBuf::default();
        loop {
            match self.next_shaped(&mut row) {
                Ok(Shaped::Row) => {
                    return Some(Row {
                        line: row.line,
                        record: row.record,
                    });
                }
                Ok(Shaped::Blank) => {}
                Ok(Shaped::Misshapen(e)) => errors.push(e),
                Ok(Shaped::End) => return None,
                Err(e) => {
                    errors.push(e);
                    return None;
                }
            }
        }
    }

    /// The next row, or `None` at the end of the file.
    pub fn next_row(&mut self) -> Result<Option<Row>, BadInput> {
        let mut row = RowBuf::default();
        if !self.next_into(&mut row)? {
            return Ok(None);
        }
        Ok(Some(Row {
            line: row.line,
            record: row.record,
        }))
    }
}

impl Row {
    /// The cell in column `index`, `None` when the column is absent or the cell is empty.
    pub fn get(&self, index: Option<usize>) -> Option<&str> {
        index
            .and_then(|i| self.record.get(i))
            .map(str::trim)
            .filter(|s| !s.is_empty())
    }
}

fn line_of(record: &csv::StringRecord) -> usize {
    record.position().map(|p| p.line() as usize).unwrap_or(0)
}

fn csv_error(file: &str, e: csv::Error) -> BadInput {
    let line = e.position().map(|p| p.line() as usize);
    let message = match e.kind() {
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => {
            format!("expected {expected_len} fields as in the header, found {len}")
        }
        csv::ErrorKind::Utf8 { .. } => "not UTF-8 text (binary data?)".to_string(),
        _ => format!("not valid CSV: {e}"),
    };
    match line {
        Some(l) => BadInput::at(file, l, message),
        None => BadInput::file(file, message),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Hands over one byte per read, so the end of the input is met in every possible place.
    struct Trickle(&'static [u8]);

    impl std::io::Read for Trickle {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            let n = buf.len().min(self.0.len()).min(1);
            buf[..n].copy_from_slice(&self.0[..n]);
            self.0 = &self.0[n..];
            Ok(n)
        }
    }

    /// Each row's line and first cell, read row by row.
    fn lines(text: &'static str) -> Vec<(usize, String)> {
        let read = |input: Box<dyn std::io::Read + Send>| {
            let mut table = Table::from_reader("t.csv", input, &["a", "b"], &["a"]).unwrap();
            let mut out = Vec::new();
            while let Some(row) = table.next_row().unwrap() {
                out.push((row.line, row.record[0].to_string()));
            }
            out
        };
        let whole = read(Box::new(text.as_bytes()));
        assert_eq!(read(Box::new(Trickle(text.as_bytes()))), whole, "{text:?}");
        whole
    }

    /// The rows read before the first error, and that error's line and message, read whole
    /// and one byte at a time (both must agree).
    fn until_error(text: &'static str) -> (Vec<usize>, Option<(Option<usize>, String)>) {
        let read = |input: Box<dyn std::io::Read + Send>| {
            let mut table = Table::from_reader("t.csv", input, &["a", "b"], &["a"]).unwrap();
            let mut seen = Vec::new();
            loop {
                match table.next_row() {
                    Ok(Some(row)) => seen.push(row.line),
                    Ok(None) => return (seen, None),
                    Err(e) => return (seen, Some((e.line, e.message))),
                }
            }
        };
        let whole = read(Box::new(text.as_bytes()));
        assert_eq!(read(Box::new(Trickle(text.as_bytes()))), whole, "{text:?}");
        whole
    }

    #[test]
    fn text_after_a_closing_quote_is_an_error_at_its_row_and_reading_goes_on() {
        // RFC 4180, section 2 (rules 5 to 7): a quoted field is enclosed in double quotes,
        // with a quote inside it doubled, so nothing may follow the closing quote but the
        // next `,` or the line end. The csv crate reads `"kp-a"x` as `kp-ax` without a word.
        let (seen, error) = until_error("a,b\n\"kp-a\"x,1\nc,2\n");
        assert_eq!(seen, Vec::<usize>::new());
        let (line, message) = error.unwrap();
        assert_eq!(line, Some(2));
        assert!(
            message.contains("(`x`) follows the closing quote"),
            "{message}"
        );
        // In the second cell, after a CRLF row, and in a cell spanning lines alike.
        for (text, at) in [
            ("a,b\r\nx,\"1.0\".1\r\n", 2),
            ("a,b\nx,1\r\n\"two\nlines\"!,2\n", 3),
            ("a,b\n\"x\" y,1\n", 2),
        ] {
            let (_, error) = until_error(text);
            assert_eq!(error.map(|e| e.0), Some(Some(at)), "{text:?}");
        }
        // A quote left open mid-file closes at the next quote lines later: the message names
        // that line, since the row's own line shows no closing quote.
        let (_, error) = until_error("a,b\n\"x,1\nc,2\nd,\"3\n");
        let (line, message) = error.unwrap();
        assert_eq!(line, Some(2));
        assert!(
            message.contains("opened on this line runs on to line 4")
                && message.contains("a `\"` is missing on this line"),
            "{message}"
        );
        let (_, error) = until_error("a,b\n\"kp-a\"x,1\n");
        assert!(!error.unwrap().1.contains("runs on"));
        // Only the cell the stray text follows counts: a line break in another cell of the
        // row, after it or before it, is no quote left open.
        for text in [
            "a,b\n\"kp-a\"x,\"two\nlines\"\n",
            "a,b\n\"two\nlines\",\"x\"y\n",
        ] {
            let (_, error) = until_error(text);
            let message = error.unwrap().1;
            assert!(!message.contains("runs on"), "{text:?}: {message}");
        }
        let (_, error) = until_error("a,b\n\"two\nlines\",\"x\n\"y\n");
        let (line, message) = error.unwrap();
        assert_eq!(line, Some(2));
        assert!(
            message.contains("a quoted cell opened on line 3 runs on to line 4")
                && message.contains("a `\"` is missing on line 3"),
            "{message}"
        );
        // The rows after it are read: the error is the row's own, as a row of another width.
        let mut table = Table::from_reader(
            "t.csv",
            Box::new("a,b\n\"p\"q,1\nc,2\n".as_bytes()),
            &["a", "b"],
            &["a"],
        )
        .unwrap();
        let mut errors = crate::load::diag::SchemaErrors::new();
        let mut read = Vec::new();
        while let Some(row) = table.next_row_collecting(&mut errors) {
            read.push((row.line, row.record[0].to_string()));
        }
        assert_eq!(read, [(3, "c".to_string())]);
        assert!(errors.finish().is_err());
        // A header cell alike: `"pack"age` would otherwise name the column `package`.
        let header = Table::from_reader(
            "t.csv",
            Box::new("\"a\"a,b\nx,1\n".as_bytes()),
            &["aa", "b"],
            &["aa"],
        );
        assert_eq!(header.err().map(|e| e.line), Some(Some(1)));
    }

    #[test]
    fn lines_ending_in_a_lone_carriage_return_are_named_as_such() {
        // Lines end in `\n` or `\r\n` (docs/bulk-format.md); a file written with lone `\r`
        // reads as one line, and "did you mean `b`?" would not say why.
        let err = Table::from_reader(
            "t.csv",
            Box::new("a,b\rx,1\r".as_bytes()),
            &["a", "b"],
            &["a"],
        )
        .err()
        .unwrap();
        assert_eq!(err.line, Some(1));
        assert!(
            err.message.contains("end in `\\r` alone"),
            "{}",
            err.message
        );
    }

    #[test]
    fn quotes_that_rfc_4180_allows_or_the_reader_keeps_as_text_read_as_before() {
        // Doubled quotes, an empty quoted cell, white space after a closing quote (trimmed
        // as every cell is), a quote inside an unquoted cell (kept as text) and a quoted cell
        // holding `,` and a line break.
        let text = "a,b\n\"x\"\"y\",1\n\"\",2\r\n\"p\" ,3\nab\"c,4\n\"q,\nr\",5\n";
        assert_eq!(until_error(text), (vec![2, 3, 4, 5, 6], None));
        let got = lines(text).into_iter().map(|(_, c)| c).collect::<Vec<_>>();
        assert_eq!(got, ["x\"y", "", "p ", "ab\"c", "q,\nr"]);
    }

    #[test]
    fn a_quoted_cell_left_open_to_the_end_of_the_file_is_an_error_at_its_row() {
        // The csv crate would hand back `y` with the rest of the file as its second cell.
        for text in [
            "a,b\nx,1\ny,\"2\nz,3\nw,4\n",
            "a,b\nx,1\ny,\"2\nz,3\nw,4",
            "a,b\r\nx,1\r\ny,\"2\r\nz,3\r\n",
        ] {
            let (seen, error) = until_error(text);
            assert_eq!(seen, [2], "{text:?}");
            let (line, message) = error.expect(text);
            assert_eq!(line, Some(3), "{text:?}");
            assert!(message.contains("never closed"), "{message}");
        }
        // After a blank line, and with the open cell's own text ending in a line feed.
        let (seen, error) = until_error("a,b\nx,1\n\ny,\"2\n");
        assert_eq!((seen, error.map(|e| e.0)), (vec![2], Some(Some(4))));
        // Closed quoted cells that hold line breaks, at the very end too, are rows as usual;
        // so is a last line ended by a carriage return alone.
        for text in [
            "a,b\nx,\"1\n2\"",
            "a,b\nx,\"1\n2\"\n\n",
            "a,b\r\nx,\"1\r\n2\"\r\n",
            "a,b\r\nx,1\r",
        ] {
            assert_eq!(until_error(text), (vec![2], None), "{text:?}");
        }
    }

    fn rows(pairs: &[(usize, &str)]) -> Vec<(usize, String)> {
        pairs.iter().map(|&(l, c)| (l, c.to_string())).collect()
    }

    /// The header's line and message when the columns are refused, read whole and one byte
    /// at a time (both must agree).
    fn header_error(text: &'static str) -> (Option<usize>, String) {
        let read = |input: Box<dyn std::io::Read + Send>| match Table::from_reader(
            "t.csv",
            input,
            &["a", "b"],
            &["a"],
        ) {
            Ok(_) => panic!("{text:?} was accepted"),
            Err(e) => (e.line, e.message),
        };
        let whole = read(Box::new(text.as_bytes()));
        assert_eq!(read(Box::new(Trickle(text.as_bytes()))), whole, "{text:?}");
        whole
    }

    #[test]
    fn column_problems_name_the_headers_own_line() {
        // Blank lines, LF or CRLF, may come before the header; rows after it already kept
        // their own lines, and the header's problems now do too.
        assert_eq!(header_error("a,c\nx,1\n").0, Some(1));
        assert_eq!(header_error("\n\na,c\nx,1\n").0, Some(3));
        assert_eq!(header_error("\r\n\r\nb\nx\n").0, Some(3));
        assert_eq!(header_error("\n\na,a\n").0, Some(3));
        let (line, message) = header_error("\n\"a,b\nx,1\n");
        assert_eq!(line, Some(2));
        assert!(message.contains("never closed"), "{message}");
        // A file of blank lines has no line worth naming; an empty one is empty at line 1.
        for text in ["\n", "\n\r\n\n", " \n\t\r\n", "  ", "\u{feff}\n"] {
            let (line, message) = header_error(text);
            assert_eq!(line, None, "{text:?}");
            assert!(
                message.starts_with("the file holds no header, only blank lines; expected"),
                "{text:?}: {message}"
            );
        }
        // A byte-order mark alone is no line, blank or not.
        for text in ["", "\u{feff}"] {
            assert_eq!(
                header_error(text),
                (
                    Some(1),
                    "the file is empty; expected a header line with columns a".to_string()
                ),
                "{text:?}"
            );
        }
        // A header of empty cells is a header: its own line is named.
        for (text, want) in [(",", 1), ("\n\n,,\nx,1\n", 3), ("\r\n , \r\n", 2)] {
            let (line, message) = header_error(text);
            assert_eq!(line, Some(want), "{text:?}");
            assert!(
                message.starts_with("the header has no column names, only empty cells;"),
                "{text:?}: {message}"
            );
        }
        // A header after blank lines still gives its rows their own lines.
        assert_eq!(lines("\r\n\na,b\nx,1\n"), rows(&[(4, "x")]));
        // A byte-order mark is dropped however the bytes arrive (`lines` also reads one byte
        // at a time).
        assert_eq!(lines("\u{feff}a,b\nx,1\n"), rows(&[(2, "x")]));
    }

    #[test]
    fn rows_after_blank_lines_keep_their_own_line() {
        let want = rows(&[(2, "x"), (4, "y"), (7, "z")]);
        assert_eq!(lines("a,b\nx,1\n\ny,2\n\n\nz,3\n"), want);
        assert_eq!(lines("a,b\r\nx,1\r\n\r\ny,2\r\n\r\n\r\nz,3\r\n"), want);
        // The last row without a line break after it, with and without blank lines before.
        assert_eq!(lines("a,b\nx,1\n\ny,2\n\n\nz,3"), want);
        assert_eq!(lines("a,b\nx,1\ny,2"), rows(&[(2, "x"), (3, "y")]));
        // Line breaks inside quoted cells belong to their row, blank lines among them too.
        assert_eq!(
            lines("a,b\n\n\"x\n\ny\",1\n\nz,\"2\n\"\n\nw,3"),
            rows(&[(3, "x\n\ny"), (7, "z"), (10, "w")])
        );
        // Blank lines at the end are no rows.
        assert_eq!(lines("a,b\nx,1\n\n\n"), rows(&[(2, "x")]));
    }
}
