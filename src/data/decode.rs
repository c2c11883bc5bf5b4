//! Byte-level plumbing under the record readers: counting, gzip, transcoding, BOM.
//!
//! Survey deliveries arrive compressed or not, in UTF-8 or in a legacy single-byte encoding,
//! sometimes with a byte-order mark. The record readers should see one thing only: a stream of
//! UTF-8 bytes (or bytes that claim to be UTF-8). This module builds that stream as a chain of
//! small `Read` adapters so that memory stays constant whatever the file size, and so that a
//! progress bar can ask how many raw bytes have been consumed.

use std::io::{self, Read};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;

use super::Encoding;

/// Bytes of the raw (possibly compressed) input consumed so far, shared with the
/// [`RecordSource`](super::RecordSource) so it can answer `bytes_read` without owning the chain.
pub(crate) type ByteCounter = Arc<AtomicU64>;

/// Problems found inside the byte chain. They travel up through `io::Error` (the only error
/// type `Read` allows) and are recognised again by `DataError::from_io`.
#[derive(Debug, thiserror::Error)]
pub(crate) enum StreamFault {
    #[error("{0}")]
    Gzip(io::Error),
    #[error("a record is longer than {limit} bytes")]
    RecordTooLong { limit: u64 },
    #[error("the file starts with a UTF-16 byte-order mark")]
    Utf16,
}

impl StreamFault {
    pub(crate) fn into_io(self) -> io::Error {
        let kind = match &self {
            StreamFault::Gzip(e) => e.kind(),
            StreamFault::RecordTooLong { .. } | StreamFault::Utf16 => io::ErrorKind::InvalidData,
        };
        io::Error::new(kind, self)
    }
}

/// Build the decoded stream for `raw`: count raw bytes, undo gzip if the magic bytes say so,
/// transcode to UTF-8, and drop a leading UTF-8 byte-order mark.
///
/// Returns the stream and whether it holds at least one byte (after the BOM), so callers can
/// report an empty file before they try to read a header.
pub(crate) fn decoded_stream(
    raw: Box<dyn Read + Send>,
    encoding: Encoding,
    counter: ByteCounter,
) -> io::Result<(Box<dyn Read + Send>, bool)> {
    let counted = CountingReader {
        inner: raw,
        count: counter,
    };
    let peeked = Prefixed::new(counted, 2)?;
    let uncompressed: Box<dyn Read + Send> = if peeked.prefix() == [0x1f, 0x8b] {
        // MultiGzDecoder, not GzDecoder: `cat a.gz b.gz` is a valid gzip file and some export
        // tools write one member per chunk.
        Box::new(GzipFaults(flate2::read::MultiGzDecoder::new(peeked)))
    } else {
        Box::new(peeked)
    };
    // No declared encoding reads UTF-16: every other byte would be NUL and the header would
    // match no column. Stop with a message that says so rather than report every column.
    let uncompressed = Prefixed::new(uncompressed, 2)?;
    if matches!(uncompressed.prefix(), [0xff, 0xfe] | [0xfe, 0xff]) {
        return Err(StreamFault::Utf16.into_io());
    }
    let uncompressed: Box<dyn Read + Send> = Box::new(uncompressed);
    let utf8: Box<dyn Read + Send> = match encoding {
        Encoding::Utf8 => uncompressed,
        Encoding::Latin1 => Box::new(Transcoder::new(uncompressed, Decoder::Latin1)),
        // Without BOM handling: the codebook declares the encoding and concord reads the file
        // as declared instead of guessing from its first bytes.
        Encoding::Windows1252 => Box::new(Transcoder::new(
            uncompressed,
            Decoder::Whatwg(encoding_rs::WINDOWS_1252.new_decoder_without_bom_handling()),
        )),
    };
    let mut start = Prefixed::new(utf8, 3)?;
    if encoding == Encoding::Utf8 && start.prefix() == [0xef, 0xbb, 0xbf] {
        start.skip_prefix();
        // Look past the BOM: a file holding only a BOM is empty.
        let rest = Prefixed::new(start, 1)?;
        let has_bytes = !rest.prefix().is_empty();
        return Ok((Box::new(rest), has_bytes));
    }
    let has_bytes = !start.prefix().is_empty();
    Ok((Box::new(start), has_bytes))
}

/// Counts bytes read from the raw input and retries interrupted reads, so nothing above has
/// to care about `ErrorKind::Interrupted`.
struct CountingReader<R> {
    inner: R,
    count: ByteCounter,
}

impl<R: Read> Read for CountingReader<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        loop {
            match self.inner.read(buf) {
                Ok(n) => {
                    self.count.fetch_add(n as u64, Ordering::Relaxed);
                    return Ok(n);
                }
                Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(e),
            }
        }
    }
}

/// A reader whose first few bytes have been read ahead so they can be inspected (gzip magic,
/// byte-order mark) and then served again. A pipe may deliver one byte per read, hence the loop.
struct Prefixed<R> {
    prefix: [u8; 4],
    pos: usize,
    len: usize,
    inner: R,
}

impl<R: Read> Prefixed<R> {
    fn new(mut inner: R, want: usize) -> io::Result<Self> {
        let mut prefix = [0u8; 4];
        let want = want.min(prefix.len());
        let mut len = 0;
        while len < want {
            match inner.read(&mut prefix[len..want]) {
                Ok(0) => break,
                Ok(n) => len += n,
                Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(e),
            }
        }
        Ok(Prefixed {
            prefix,
            pos: 0,
            len,
            inner,
        })
    }

    fn prefix(&self) -> &[u8] {
        &self.prefix[self.pos..self.len]
    }

    fn skip_prefix(&mut self) {
        self.pos = self.len;
    }
}

impl<R: Read> Read for Prefixed<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if self.pos < self.len {
            let n = buf.len().min(self.len - self.pos);
            buf[..n].copy_from_slice(&self.prefix[self.pos..self.pos + n]);
            self.pos += n;
            return Ok(n);
        }
        self.inner.read(buf)
    }
}

/// Marks errors from the gzip decoder so the user is told the compressed file is damaged
/// rather than given a bare "invalid input" or "unexpected end of file".
struct GzipFaults<R>(R);

impl<R: Read> Read for GzipFaults<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        self.0.read(buf).map_err(|e| StreamFault::Gzip(e).into_io())
    }
}

/// How to turn one chunk of legacy bytes into UTF-8.
enum Decoder {
    /// True ISO-8859-1: every byte is the code point of the same number (0xE9 -> U+00E9).
    ///
    /// This is done by hand on purpose. encoding_rs follows the WHATWG Encoding Standard, where
    /// the labels "latin1" and "iso-8859-1" mean windows-1252, which turns bytes 0x80-0x9F
    /// into typographic characters (0x80 -> '€'). A file declared latin1 must keep those bytes
    /// as the C1 control characters U+0080-U+009F, so that a stray control byte shows up as
    /// what it is instead of as a plausible-looking euro sign.
    Latin1,
    /// Any encoding encoding_rs knows; used for windows-1252 (WHATWG index-windows-1252).
    Whatwg(encoding_rs::Decoder),
}

impl Decoder {
    /// Decode from `src` into `dst`; returns (bytes read, bytes written, finished), where
    /// `finished` means `last` was set and the decoder has nothing more to give.
    fn decode(&mut self, src: &[u8], dst: &mut [u8], last: bool) -> (usize, usize, bool) {
        match self {
            Decoder::Latin1 => {
                let mut read = 0;
                let mut written = 0;
                while read < src.len() && written + 2 <= dst.len() {
                    let byte = src[read];
                    if byte < 0x80 {
                        dst[written] = byte;
                        written += 1;
                    } else {
                        // U+0080..U+00FF in UTF-8: 110000xx 10xxxxxx.
                        dst[written] = 0xc0 | (byte >> 6);
                        dst[written + 1] = 0x80 | (byte & 0x3f);
                        written += 2;
                    }
                    read += 1;
                }
                (read, written, last && read == src.len())
            }
            Decoder::Whatwg(decoder) => {
                let (result, read, written, _replaced) = decoder.decode_to_utf8(src, dst, last);
                let finished = last && result == encoding_rs::CoderResult::InputEmpty;
                (read, written, finished)
            }
        }
    }
}

const TRANSCODE_INPUT: usize = 16 * 1024;
// Any single-byte encoding needs at most 3 UTF-8 bytes per input byte.
const TRANSCODE_OUTPUT: usize = 3 * TRANSCODE_INPUT + 16;

/// A `Read` adapter that transcodes a legacy-encoded stream to UTF-8 with fixed buffers.
struct Transcoder<R> {
    inner: R,
    decoder: Decoder,
    input: Box<[u8]>,
    in_pos: usize,
    in_len: usize,
    output: Box<[u8]>,
    out_pos: usize,
    out_len: usize,
    eof: bool,
    finished: bool,
}

impl<R: Read> Transcoder<R> {
    fn new(inner: R, decoder: Decoder) -> Self {
        Transcoder {
            inner,
            decoder,
            input: vec![0; TRANSCODE_INPUT].into_boxed_slice(),
            in_pos: 0,
            in_len: 0,
            output: vec![0; TRANSCODE_OUTPUT].into_boxed_slice(),
            out_pos: 0,
            out_len: 0,
            eof: false,
            finished: false,
        }
    }
}

impl<R: Read> Read for Transcoder<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if buf.is_empty() {
            return Ok(0);
        }
        loop {
            if self.out_pos < self.out_len {
                let n = buf.len().min(self.out_len - self.out_pos);
                buf[..n].copy_from_slice(&self.output[self.out_pos..self.out_pos + n]);
                self.out_pos += n;
                return Ok(n);
            }
            if self.finished {
                return Ok(0);
            }
            if self.in_pos == self.in_len && !self.eof {
                let n = self.inner.read(&mut self.input)?;
                self.in_pos = 0;
                self.in_len = n;
                self.eof = n == 0;
            }
            let (read, written, finished) = self.decoder.decode(
                &self.input[self.in_pos..self.in_len],
                &mut self.output,
                self.eof,
            );
            self.in_pos += read;
            self.out_pos = 0;
            self.out_len = written;
            self.finished = finished;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn decode_all(bytes: &[u8], encoding: Encoding) -> Vec<u8> {
        let counter = ByteCounter::default();
        let (mut stream, _) =
            decoded_stream(Box::new(io::Cursor::new(bytes.to_vec())), encoding, counter).unwrap();
        let mut out = Vec::new();
        stream.read_to_end(&mut out).unwrap();
        out
    }

    #[test]
    fn latin1_keeps_c1_controls() {
        let all: Vec<u8> = (0..=255).collect();
        let text = String::from_utf8(decode_all(&all, Encoding::Latin1)).unwrap();
        let expected: String = (0..=255u32).map(|c| char::from_u32(c).unwrap()).collect();
        assert_eq!(text, expected);
    }

    #[test]
    fn transcoding_survives_one_byte_reads() {
        // Larger than the transcoder buffers, and read back one byte at a time.
        let input = vec![0xe9u8; TRANSCODE_INPUT * 2 + 7];
        let (mut stream, _) = decoded_stream(
            Box::new(io::Cursor::new(input.clone())),
            Encoding::Windows1252,
            ByteCounter::default(),
        )
        .unwrap();
        let mut out = Vec::new();
        let mut byte = [0u8; 1];
        while stream.read(&mut byte).unwrap() == 1 {
            out.push(byte[0]);
        }
        assert_eq!(String::from_utf8(out).unwrap(), "é".repeat(input.len()));
    }

    #[test]
    fn utf16_is_refused_in_every_encoding() {
        for encoding in [Encoding::Utf8, Encoding::Latin1, Encoding::Windows1252] {
            for bom in [[0xff, 0xfe], [0xfe, 0xff]] {
                let raw: Box<dyn Read + Send> = Box::new(io::Cursor::new(bom.to_vec()));
                let err = decoded_stream(raw, encoding, ByteCounter::default())
                    .err()
                    .expect("UTF-16 is refused");
                assert!(err.to_string().contains("UTF-16"), "{err}");
            }
        }
    }

    #[test]
    fn bom_is_dropped_only_for_utf8() {
        assert_eq!(decode_all(b"\xef\xbb\xbfab", Encoding::Utf8), b"ab");
        assert_eq!(decode_all(b"\xef\xbb\xbf", Encoding::Utf8), b"");
        assert_eq!(
            String::from_utf8(decode_all(b"\xef\xbb\xbfa", Encoding::Latin1)).unwrap(),
            "\u{ef}\u{bb}\u{bf}a"
        );
    }

    #[test]
    fn short_inputs_are_not_mistaken_for_gzip() {
        assert_eq!(decode_all(b"\x1f", Encoding::Utf8), b"\x1f");
        assert_eq!(decode_all(b"", Encoding::Utf8), b"");
    }
}
