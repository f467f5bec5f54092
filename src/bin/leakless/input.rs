//! Reading recordings in chunks: WAV (8, 16, 24 and 32-bit integer PCM and 32-bit float, any
//! number of channels, via `hound`) and CSV (numbers in one or more columns, via `csv`). A
//! recording is never loaded whole: the reader holds one chunk of `CHUNK_FRAMES` frames, so
//! memory does not grow with the file's length. A CSV is read twice (once to check every
//! value and count the rows, once to analyse), because a linear average over the whole
//! recording needs the block count before the first block.

use std::cell::Cell;
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::{Path, PathBuf};
use std::rc::Rc;

use crate::failure::{Failure, Outcome};

/// Frames per chunk handed to the analysis (any size works; the analyzers are chunk-invariant).
pub const CHUNK_FRAMES: usize = 4096;

/// Where the samples come from: the options every subcommand that reads a recording shares.
#[derive(clap::Args, Clone, Debug)]
pub struct InputArgs {
    /// A WAV file (8, 16, 24 or 32-bit integer PCM or 32-bit float, any channel count) or a
    /// CSV of numbers (one column, or choose one with --column)
    #[arg(long, value_name = "PATH")]
    pub input: PathBuf,
    /// Sample rate of a CSV, Hz (a WAV carries its own)
    #[arg(long, value_name = "HZ", allow_hyphen_values = true, value_parser = crate::options::positive_f64)]
    pub fs: Option<f64>,
    /// WAV channel to analyse, 0-based (needed when the WAV has more than one)
    #[arg(long, value_name = "N")]
    pub channel: Option<u16>,
    /// CSV column to analyse: its header name or its 0-based index (needed when the CSV has
    /// more than one column)
    #[arg(long, value_name = "NAME_OR_INDEX")]
    pub column: Option<String>,
}

/// How the file codes its samples.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Encoding {
    /// Integer PCM of `bits` bits: converter codes, `2^(bits-1)` to full scale.
    Pcm {
        /// 8, 16, 24 or 32.
        bits: u16,
    },
    /// 32-bit float WAV.
    Float,
    /// Numbers in a CSV.
    Text,
}

impl Encoding {
    /// For the settings: "pcm16", "float32", "csv".
    pub fn name(self) -> String {
        match self {
            Encoding::Pcm { bits } => format!("pcm{bits}"),
            Encoding::Float => "float32".to_string(),
            Encoding::Text => "csv".to_string(),
        }
    }
}

/// One chunk of samples of the chosen channels, frame by frame (`stride` values a frame).
pub enum Chunk<'a> {
    /// Integer PCM codes.
    Pcm(&'a [i32]),
    /// Float WAV or CSV values.
    Float(&'a [f32]),
}

/// Which channels to read.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Channels {
    /// Exactly one: `--channel`/`--column`, or the only one; several without a choice are an
    /// error.
    One,
    /// Every channel (every column of a CSV), for results given per channel.
    All,
}

/// An open recording, read chunk by chunk.
pub struct Recording {
    /// The file.
    pub path: PathBuf,
    /// How it codes samples.
    pub encoding: Encoding,
    /// Hz, from the WAV header or `--fs`.
    pub sample_rate_hz: f64,
    /// Channels (CSV: columns) in the file.
    pub channels_in_file: u16,
    /// The channels read, in order (0-based).
    pub selected: Vec<u16>,
    /// The name of each channel read: "channel N" or the CSV column's header.
    pub names: Vec<String>,
    /// Frames (samples per channel) in the recording.
    pub frames: u64,
    reader: Reader,
    pcm: Vec<i32>,
    float: Vec<f32>,
}

enum Reader {
    Wav(hound::WavReader<Counting<BufReader<File>>>),
    Csv(Box<CsvStream>),
}

impl Recording {
    /// Opens `args.input` (by its extension: `.wav`, or `.csv`/`.txt`) and checks everything
    /// that can be checked before the first sample: format, channel or column, sample rate,
    /// and for a CSV every value.
    pub fn open(args: &InputArgs, channels: Channels) -> Outcome<Recording> {
        let path = &args.input;
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase())
            .unwrap_or_default();
        let meta = std::fs::metadata(path).map_err(|e| Failure::io(path, &e))?;
        if meta.is_dir() {
            return Err(Failure::file(path, "is a folder; give a WAV or CSV file"));
        }
        if meta.len() == 0 {
            return Err(Failure::file(path, "the file is empty; give a recording"));
        }
        match ext.as_str() {
            "wav" => open_wav(args, channels, meta.len()),
            "csv" | "txt" => open_csv(args, channels),
            _ => Err(Failure::file(
                path,
                "unknown file type (expected .wav or .csv); rename it or convert it",
            )),
        }
    }

    /// Calls `f` with every chunk in turn, with a progress bar on standard error when it is a
    /// terminal and the recording is long (over a million frames).
    pub fn stream(&mut self, mut f: impl FnMut(&Chunk<'_>) -> Outcome<()>) -> Outcome<()> {
        use std::io::IsTerminal;
        let bar = if self.frames > 1_000_000 && std::io::stderr().is_terminal() {
            let bar = indicatif::ProgressBar::new(self.frames);
            if let Ok(style) = indicatif::ProgressStyle::with_template(
                "{prefix} [{bar:40}] {percent:>3}% {eta} left",
            ) {
                bar.set_style(style.progress_chars("=> "));
            }
            bar.set_prefix(
                self.path
                    .file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default(),
            );
            bar
        } else {
            indicatif::ProgressBar::hidden()
        };
        let stride = self.stride().max(1) as u64;
        let mut each = || -> Outcome<()> {
            while let Some(chunk) = self.next_chunk()? {
                let frames = match &chunk {
                    Chunk::Pcm(c) => c.len() as u64,
                    Chunk::Float(c) => c.len() as u64,
                } / stride;
                f(&chunk)?;
                bar.inc(frames);
            }
            Ok(())
        };
        let result = each();
        // Cleared on failure too, so the error line stands alone.
        bar.finish_and_clear();
        result
    }

    /// Values a frame in each chunk.
    pub fn stride(&self) -> usize {
        self.selected.len()
    }

    /// The next chunk (at most `CHUNK_FRAMES` frames of the chosen channels), `None` at the end.
    pub fn next_chunk(&mut self) -> Outcome<Option<Chunk<'_>>> {
        self.pcm.clear();
        self.float.clear();
        match &mut self.reader {
            Reader::Wav(reader) => {
                let channels = self.channels_in_file as usize;
                let wanted = CHUNK_FRAMES * channels;
                let mut index = 0usize;
                let result: Result<(), hound::Error> = match self.encoding {
                    Encoding::Float => reader.samples::<f32>().take(wanted).try_for_each(|s| {
                        if self.selected.contains(&((index % channels) as u16)) {
                            self.float.push(s?);
                        } else {
                            s?;
                        }
                        index += 1;
                        Ok(())
                    }),
                    _ => reader.samples::<i32>().take(wanted).try_for_each(|s| {
                        if self.selected.contains(&((index % channels) as u16)) {
                            self.pcm.push(s?);
                        } else {
                            s?;
                        }
                        index += 1;
                        Ok(())
                    }),
                };
                result.map_err(|e| wav_error(&self.path, e, Part::Data))?;
            }
            Reader::Csv(csv) => csv.next_chunk(&mut self.float)?,
        }
        Ok(if !self.pcm.is_empty() {
            Some(Chunk::Pcm(&self.pcm))
        } else if !self.float.is_empty() {
            Some(Chunk::Float(&self.float))
        } else {
            None
        })
    }
}

/// A reader that counts the bytes it delivers: after `hound` has read the header, that is
/// where the data starts, so a data chunk longer than the file is found before any analysis.
/// (`hound` has no accessor for its reader, so the count is shared.)
struct Counting<R> {
    inner: R,
    count: Rc<Cell<u64>>,
}

impl<R: Read> Read for Counting<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.count.set(self.count.get() + n as u64);
        Ok(n)
    }
}

/// Where in the file an error happened: the header or the samples.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Part {
    Header,
    Data,
}

fn wav_error(path: &Path, error: hound::Error, part: Part) -> Failure {
    match error {
        // Any read error in the header (the file was opened already) means it ends early.
        hound::Error::IoError(e)
            if part == Part::Header || e.kind() == std::io::ErrorKind::UnexpectedEof =>
        {
            Failure::file(
                path,
                match part {
                    Part::Header => {
                        "the file ends inside its WAV header (truncated, or not a WAV file); \
                         re-export it"
                    }
                    Part::Data => {
                        "the file ends before its data does (truncated, e.g. an interrupted \
                         recording); re-export it or cut it to its whole frames"
                    }
                },
            )
        }
        hound::Error::IoError(e) => Failure::io(path, &e),
        hound::Error::FormatError(reason) if reason.contains("tag") => Failure::file(
            path,
            format!("not a WAV file ({reason}); give a WAV or CSV recording"),
        ),
        hound::Error::FormatError(reason) => Failure::file(
            path,
            format!(
                "unsupported WAV layout ({reason}); use 8, 16, 24 or 32-bit integer PCM or \
                 32-bit float"
            ),
        ),
        hound::Error::Unsupported => Failure::file(
            path,
            "unsupported WAV layout; use 8, 16, 24 or 32-bit integer PCM or 32-bit float",
        ),
        other => Failure::file(path, format!("{other}; re-export it as PCM or float WAV")),
    }
}

fn open_wav(args: &InputArgs, channels: Channels, file_len: u64) -> Outcome<Recording> {
    let path = &args.input;
    if args.fs.is_some() {
        return Err(Failure::usage(format!(
            "--fs: {} is a WAV and carries its rate; leave --fs out",
            path.display()
        )));
    }
    if args.column.is_some() {
        return Err(Failure::usage(format!(
            "--column is for CSV files; {} is a WAV: use --channel N",
            path.display()
        )));
    }
    let file = File::open(path).map_err(|e| Failure::io(path, &e))?;
    let count = Rc::new(Cell::new(0));
    let counting = Counting {
        inner: BufReader::new(file),
        count: Rc::clone(&count),
    };
    let reader = hound::WavReader::new(counting).map_err(|e| wav_error(path, e, Part::Header))?;
    let spec = reader.spec();
    let encoding = match (spec.sample_format, spec.bits_per_sample) {
        (hound::SampleFormat::Int, bits @ (8 | 16 | 24 | 32)) => Encoding::Pcm { bits },
        (hound::SampleFormat::Float, 32) => Encoding::Float,
        (format, bits) => {
            return Err(Failure::file(
                path,
                format!(
                    "unsupported WAV sample format ({format:?}, {bits}-bit); use 8, 16, 24 or \
                     32-bit integer PCM or 32-bit float"
                ),
            ))
        }
    };
    let data_start = count.get();
    let bytes_per_sample = spec.bits_per_sample.div_ceil(8) as u64;
    let data_bytes = reader.len() as u64 * bytes_per_sample;
    if data_start + data_bytes > file_len {
        let whole =
            (file_len.saturating_sub(data_start)) / (bytes_per_sample * spec.channels as u64);
        return Err(Failure::file(
            path,
            format!(
                "the header promises {} frames but the file holds {whole} (truncated, e.g. an \
                 interrupted recording); re-export it",
                reader.duration()
            ),
        ));
    }
    if spec.sample_rate == 0 {
        return Err(Failure::file(
            path,
            "the header gives a sample rate of 0 Hz",
        ));
    }
    let channels_in_file = spec.channels;
    let selected = select(
        path,
        channels,
        args.channel,
        channels_in_file,
        "channel",
        "--channel",
    )?;
    let names = selected.iter().map(|c| format!("channel {c}")).collect();
    Ok(Recording {
        path: path.clone(),
        encoding,
        sample_rate_hz: spec.sample_rate as f64,
        channels_in_file,
        selected,
        names,
        frames: reader.duration() as u64,
        reader: Reader::Wav(reader),
        pcm: Vec::with_capacity(CHUNK_FRAMES * channels_in_file as usize),
        float: Vec::with_capacity(CHUNK_FRAMES * channels_in_file as usize),
    })
}

/// The channel list: one named by `choice`, or the only one, or all.
fn select(
    path: &Path,
    channels: Channels,
    choice: Option<u16>,
    count: u16,
    what: &str,
    option: &str,
) -> Outcome<Vec<u16>> {
    if let Some(c) = choice {
        if c >= count {
            return Err(Failure::usage(format!(
                "{option} {c}: {} has {count} {what}s (0 to {})",
                path.display(),
                count.saturating_sub(1)
            )));
        }
        return Ok(vec![c]);
    }
    match channels {
        Channels::All => Ok((0..count).collect()),
        Channels::One if count == 1 => Ok(vec![0]),
        Channels::One => Err(Failure::usage(format!(
            "{}: {count} {what}s; choose one with {option} (0 to {})",
            path.display(),
            count - 1
        ))),
    }
}

/// A CSV read row by row; values of the chosen columns, already checked by the first pass.
struct CsvStream {
    path: PathBuf,
    reader: csv::Reader<BufReader<File>>,
    columns: Vec<usize>,
    skip_header: bool,
    record: csv::StringRecord,
}

fn csv_reader(path: &Path) -> Outcome<csv::Reader<BufReader<File>>> {
    let file = File::open(path).map_err(|e| Failure::io(path, &e))?;
    Ok(csv::ReaderBuilder::new()
        .has_headers(false)
        .comment(Some(b'#'))
        .trim(csv::Trim::All)
        .flexible(false)
        .from_reader(BufReader::new(file)))
}

/// A field that reads as a number, including the texts `NaN` and `inf` (which are then refused
/// as samples with their own message, rather than taken for a header).
fn looks_numeric(field: &str) -> bool {
    field.parse::<f64>().is_ok()
}

/// The value of one CSV field, or what is wrong with it.
fn parse_value(field: &str) -> Result<f32, String> {
    if field.is_empty() {
        return Err("an empty field; every row needs a value in the column".to_string());
    }
    match field.parse::<f32>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(format!(
            "{field:?} is not a finite sample (NaN or infinite); remove or repair that row"
        )),
        Err(_) => Err(format!("not a number: {field:?}")),
    }
}

impl CsvStream {
    fn next_chunk(&mut self, out: &mut Vec<f32>) -> Outcome<()> {
        let mut frames = 0;
        while frames < CHUNK_FRAMES {
            let more = self
                .reader
                .read_record(&mut self.record)
                .map_err(|e| csv_error(&self.path, e))?;
            if !more {
                break;
            }
            if self.skip_header {
                self.skip_header = false;
                continue;
            }
            for &c in &self.columns {
                let line = self.record.position().map(|p| p.line()).unwrap_or(0);
                let value = parse_value(self.record.get(c).unwrap_or("")).map_err(|problem| {
                    Failure::runtime(format!("{}:{line}: {problem}", self.path.display()))
                })?;
                out.push(value);
            }
            frames += 1;
        }
        Ok(())
    }
}

fn csv_error(path: &Path, error: csv::Error) -> Failure {
    let line = error.position().map(|p| p.line()).unwrap_or(0);
    match error.into_kind() {
        csv::ErrorKind::Io(e) => Failure::io(path, &e),
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => Failure::runtime(format!(
            "{}:{line}: {len} fields where the rows before have {expected_len}; every row needs \
             the same columns",
            path.display()
        )),
        csv::ErrorKind::Utf8 { .. } => Failure::runtime(format!(
            "{}:{line}: not UTF-8 text; save the CSV as UTF-8",
            path.display()
        )),
        other => Failure::runtime(format!("{}:{line}: {other:?}", path.display())),
    }
}

/// What the start of a CSV says about its layout: refuses semicolon separators and CR-only
/// line endings, which would otherwise be read wrongly.
fn sniff_csv(path: &Path) -> Outcome<()> {
    let mut head = vec![0u8; 64 * 1024];
    let mut file = File::open(path).map_err(|e| Failure::io(path, &e))?;
    let mut filled = 0;
    loop {
        let n = file
            .read(&mut head[filled..])
            .map_err(|e| Failure::io(path, &e))?;
        if n == 0 || filled + n == head.len() {
            filled += n;
            break;
        }
        filled += n;
    }
    let head = &head[..filled];
    let cr_alone = head.windows(2).any(|w| w[0] == b'\r' && w[1] != b'\n')
        || (head.last() == Some(&b'\r') && !head.contains(&b'\n'));
    if cr_alone {
        return Err(Failure::file(
            path,
            "lines end in a bare carriage return (old Mac line endings); convert them to \
             newlines, e.g. tr '\\r' '\\n' < IN > OUT",
        ));
    }
    let first_line = head
        .split(|&b| b == b'\n')
        .map(|l| String::from_utf8_lossy(l).trim().to_string())
        .find(|l| !l.is_empty() && !l.starts_with('#'))
        .unwrap_or_default();
    if first_line.contains(';') {
        return Err(Failure::file(
            path,
            format!(
                "the columns are separated by semicolons ({first_line:?}, a spreadsheet's \
                 decimal-comma export?); save it with commas between columns and points in \
                 numbers"
            ),
        ));
    }
    Ok(())
}

fn open_csv(args: &InputArgs, channels: Channels) -> Outcome<Recording> {
    let path = &args.input;
    if args.channel.is_some() {
        return Err(Failure::usage(format!(
            "--channel is for WAV files; {} is a CSV: use --column NAME_OR_INDEX",
            path.display()
        )));
    }
    let sample_rate_hz = args.fs.ok_or_else(|| {
        Failure::usage(format!(
            "{}: a CSV carries no sample rate; give it with --fs HZ",
            path.display()
        ))
    })?;
    sniff_csv(path)?;

    // The first record: a header if none of its fields reads as a number.
    let mut reader = csv_reader(path)?;
    let mut record = csv::StringRecord::new();
    if !reader
        .read_record(&mut record)
        .map_err(|e| csv_error(path, e))?
    {
        return Err(Failure::file(path, "no rows; give a CSV of samples"));
    }
    let has_header = record.iter().all(|f| !looks_numeric(f));
    let column_count = record.len();
    let names: Vec<String> = if has_header {
        record.iter().map(|s| s.to_string()).collect()
    } else {
        (0..column_count).map(|i| i.to_string()).collect()
    };
    let selected: Vec<u16> = match &args.column {
        Some(choice) => {
            let by_name = names.iter().position(|n| n == choice);
            let by_index = choice.parse::<usize>().ok().filter(|&i| i < column_count);
            match by_name.or(by_index) {
                Some(i) => vec![i as u16],
                None => {
                    return Err(Failure::usage(format!(
                        "--column {choice}: {} has no such column; its columns are {} (or \
                         index 0 to {})",
                        path.display(),
                        quoted_list(&names, has_header),
                        column_count - 1
                    )))
                }
            }
        }
        None if column_count == 1 || channels == Channels::All => {
            (0..column_count as u16).collect()
        }
        None => {
            let decimal_comma = !has_header
                && column_count == 2
                && record.get(0).is_some_and(|f| {
                    f.trim_start_matches(['-', '+'])
                        .chars()
                        .all(|c| c.is_ascii_digit())
                })
                && record
                    .get(1)
                    .is_some_and(|f| !f.is_empty() && f.chars().all(|c| c.is_ascii_digit()));
            if decimal_comma {
                return Err(Failure::file(
                    path,
                    format!(
                        "line 1 reads {:?}: a decimal comma? This reader wants points in \
                         numbers and commas between columns; convert the file, or if these \
                         really are two columns choose one with --column 0 or --column 1",
                        record.iter().collect::<Vec<_>>().join(",")
                    ),
                ));
            }
            return Err(Failure::usage(format!(
                "{}: {column_count} columns ({}); choose one with --column NAME_OR_INDEX",
                path.display(),
                quoted_list(&names, has_header)
            )));
        }
    };
    // First pass: check every value of the chosen columns and count the rows.
    let mut frames = 0u64;
    if !has_header {
        check_row(path, &record, &selected)?;
        frames += 1;
    }
    while reader
        .read_record(&mut record)
        .map_err(|e| csv_error(path, e))?
    {
        check_row(path, &record, &selected)?;
        frames += 1;
    }
    if frames == 0 {
        return Err(Failure::file(path, "a header but no samples"));
    }
    let names = selected
        .iter()
        .map(|&c| names[c as usize].clone())
        .collect();
    Ok(Recording {
        path: path.clone(),
        encoding: Encoding::Text,
        sample_rate_hz,
        channels_in_file: column_count as u16,
        selected: selected.clone(),
        names,
        frames,
        reader: Reader::Csv(Box::new(CsvStream {
            path: path.clone(),
            reader: csv_reader(path)?,
            columns: selected.iter().map(|&c| c as usize).collect(),
            skip_header: has_header,
            record: csv::StringRecord::new(),
        })),
        pcm: Vec::new(),
        float: Vec::with_capacity(CHUNK_FRAMES * column_count),
    })
}

fn check_row(path: &Path, record: &csv::StringRecord, columns: &[u16]) -> Outcome<()> {
    let line = record.position().map(|p| p.line()).unwrap_or(0);
    for &c in columns {
        parse_value(record.get(c as usize).unwrap_or(""))
            .map_err(|problem| Failure::runtime(format!("{}:{line}: {problem}", path.display())))?;
    }
    Ok(())
}

fn quoted_list(names: &[String], has_header: bool) -> String {
    if has_header {
        names
            .iter()
            .map(|n| format!("{n:?}"))
            .collect::<Vec<_>>()
            .join(", ")
    } else {
        "no header".to_string()
    }
}
