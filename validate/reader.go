package validate

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strings"
	"unicode/utf8"

	"github.com/halovet/halovet/terms"
)

// RecordReader reads shipment records from a batch file one at a time.
//
// Next returns exactly one of: a record (lerr == nil, err == nil); a *LineError for a line
// that could not be read as a record (the reader has skipped it and the next call continues
// with the following line); or err != nil, which is io.EOF at the end of the input or the
// underlying reader's error. Blank lines are skipped without a result. Every record and every
// line error carries the 1-based number of the physical line it came from (the header is
// line 1 in CSV).
type RecordReader interface {
	Next() (rec Record, lerr *LineError, err error)
}

// LineError is one input line that could not be read as a record.
type LineError struct {
	Line   int64  // 1-based physical line number
	Reason string // what is wrong and what is accepted
}

func (e *LineError) Error() string { return fmt.Sprintf("line %d: %s", e.Line, e.Reason) }

// DefaultMaxLineBytes is the longest line a reader accepts (1 MiB, without the line end).
// Longer lines are reported as line errors and skipped without being held in memory whole.
const DefaultMaxLineBytes = 1 << 20

// ReaderOption configures a reader.
type ReaderOption func(*lineScanner)

// WithCSVSeparator sets the CSV field separator: ',' or ';' (other bytes are ignored). Without
// it the CSV reader takes ';' when the header row holds semicolons and no comma.
func WithCSVSeparator(sep byte) ReaderOption {
	return func(s *lineScanner) {
		if sep == ',' || sep == ';' {
			s.csvSep = sep
		}
	}
}

// WithMaxLineBytes sets the longest accepted line, in bytes (at least 64).
func WithMaxLineBytes(n int) ReaderOption {
	return func(s *lineScanner) { s.max = max(n, 64) }
}

// Format is a batch file format.
type Format int

// Batch file formats.
const (
	FormatUnknown Format = iota
	FormatCSV            // comma-separated values with a header row
	FormatJSONL          // JSON Lines: one JSON object per line
)

// String returns "csv" or "jsonl".
func (f Format) String() string {
	switch f {
	case FormatCSV:
		return "csv"
	case FormatJSONL:
		return "jsonl"
	}
	return "unknown"
}

// ParseFormat reads "csv", "jsonl", "json-lines" or "ndjson" case-insensitively.
func ParseFormat(s string) (Format, error) {
	switch enumKey(s) {
	case "csv":
		return FormatCSV, nil
	case "jsonl", "jsonlines", "ndjson":
		return FormatJSONL, nil
	}
	return FormatUnknown, fmt.Errorf("%w: format %q; accepted: csv, jsonl", terms.ErrUnknownValue, cutText(s))
}

// FormatOfPath guesses the format from a file name's extension (.csv, .jsonl, .ndjson).
func FormatOfPath(path string) Format {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv":
		return FormatCSV
	case ".jsonl", ".ndjson":
		return FormatJSONL
	}
	return FormatUnknown
}

// NewReader returns the reader for a format.
func NewReader(f Format, r io.Reader, opts ...ReaderOption) (RecordReader, error) {
	switch f {
	case FormatCSV:
		return NewCSVReader(r, opts...)
	case FormatJSONL:
		return NewJSONLReader(r, opts...), nil
	}
	return nil, fmt.Errorf("%w: format %v; accepted: csv, jsonl", terms.ErrUnknownValue, f)
}

// lineScanner splits input into physical lines of at most max bytes. A line is ended by "\n"
// (a preceding "\r" is dropped) or by the end of input.
type lineScanner struct {
	br   *bufio.Reader
	max  int
	line int64
	acc  []byte // holds a line longer than the bufio buffer
	bom  bool   // first line checked for a UTF-8 byte order mark
	// csvSep is the CSV field separator set by WithCSVSeparator; 0: detect from the header.
	csvSep byte
}

const scanBufferSize = 64 << 10

func newLineScanner(r io.Reader, opts []ReaderOption) *lineScanner {
	s := &lineScanner{max: DefaultMaxLineBytes}
	for _, o := range opts {
		o(s)
	}
	s.br = bufio.NewReaderSize(r, scanBufferSize)
	return s
}

// errLineTooLong is returned by next for a line over the limit; the line has been skipped.
type errLineTooLong struct{ n int64 }

func (e errLineTooLong) Error() string { return fmt.Sprintf("line is %d bytes or longer", e.n) }

// next returns the next line without its line end. The slice is valid until the next call.
// It returns errLineTooLong (line skipped), io.EOF at the end, or the reader's error.
func (s *lineScanner) next() ([]byte, error) {
	s.acc = s.acc[:0]
	var total int64
	tooLong := false
	var line []byte
	for {
		chunk, err := s.br.ReadSlice('\n')
		total += int64(len(chunk))
		if !tooLong {
			if total-int64(trailingEOL(chunk, err)) > int64(s.max) {
				tooLong = true // from here on the line is only counted, never held
			} else if err == bufio.ErrBufferFull || len(s.acc) > 0 {
				if cap(s.acc) == 0 {
					// One allocation of the limit, reused for every long line, instead of
					// repeated doubling.
					s.acc = make([]byte, 0, s.max+2)
				}
				s.acc = append(s.acc, chunk...)
			} else {
				line = chunk
			}
		}
		if err == bufio.ErrBufferFull {
			continue
		}
		if err == io.EOF {
			if total == 0 {
				return nil, io.EOF
			}
		} else if err != nil {
			return nil, err
		}
		break
	}
	s.line++
	if tooLong {
		return nil, errLineTooLong{n: total}
	}
	if line == nil {
		line = s.acc
	}
	line = bytes.TrimSuffix(line, []byte{'\n'})
	line = bytes.TrimSuffix(line, []byte{'\r'})
	if !s.bom {
		s.bom = true
		line = bytes.TrimPrefix(line, []byte("\xef\xbb\xbf"))
	}
	return line, nil
}

// trailingEOL counts the line-end bytes at the end of a complete chunk.
func trailingEOL(chunk []byte, err error) int {
	if err != nil || len(chunk) == 0 || chunk[len(chunk)-1] != '\n' {
		return 0
	}
	if len(chunk) > 1 && chunk[len(chunk)-2] == '\r' {
		return 2
	}
	return 1
}

// checkText reports why a line is not text: invalid UTF-8 or a control character other than
// tab. It returns "" for good text.
func checkText(line []byte) string {
	for i := 0; i < len(line); {
		c := line[i]
		if c < utf8.RuneSelf {
			if c < 0x20 && c != '\t' || c == 0x7f {
				return fmt.Sprintf("control character 0x%02X at byte %d; the line is not text (binary data?)", c, i+1)
			}
			i++
			continue
		}
		r, n := utf8.DecodeRune(line[i:])
		if r == utf8.RuneError && n <= 1 {
			if i == 0 && len(line) > 1 && (c == 0xFF && line[1] == 0xFE || c == 0xFE && line[1] == 0xFF) {
				return "the file is UTF-16 text (byte order mark 0x" + fmt.Sprintf("%02X%02X", c, line[1]) + "); save it as UTF-8 and send it again"
			}
			return fmt.Sprintf("byte 0x%02X at byte %d is not UTF-8: the file looks saved in a legacy code page (such as Windows-1252 or ISO 8859-1, where it may stand for an accented letter); save it as UTF-8 and send it again", c, i+1)
		}
		i += n
	}
	return ""
}

// isSkipped tells the lines every reader passes over: blank lines and comment lines,
// whose first character other than a space or tab is '#'.
func isSkipped(line []byte) bool {
	t := bytes.TrimSpace(line)
	return len(t) == 0 || t[0] == '#'
}

// tooLongError turns a skipped line into its line error.
func (s *lineScanner) tooLongError(err error) (*LineError, bool) {
	var tl errLineTooLong
	if !errors.As(err, &tl) {
		return nil, false
	}
	return &LineError{Line: s.line, Reason: fmt.Sprintf("line is %d bytes long, over the limit of %d bytes; skipped", tl.n, s.max)}, true
}

// parseComposition reads a declared composition written as "HFC-125=44;HFC-143a=52;HFC-134a=4"
// (identifier, "=", mass percent; shares separated by ";"; an optional "%" after the number).
// The identifier is everything before the last "=", so chemical names with commas or hyphens
// are fine.
func parseComposition(s string) ([]DeclaredShare, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return nil, nil
	}
	n := strings.Count(s, ";") + 1
	out := make([]DeclaredShare, 0, n)
	for part := range strings.SplitSeq(s, ";") {
		part = strings.TrimSpace(part)
		if part == "" {
			continue
		}
		i := strings.LastIndexByte(part, '=')
		if i < 0 {
			return nil, fmt.Errorf("share %q has no \"=\"; write identifier=percent separated by \";\", e.g. HFC-125=44;HFC-143a=52;HFC-134a=4", cutText(part))
		}
		id := strings.TrimSpace(part[:i])
		num := strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(part[i+1:]), "%"))
		if id == "" {
			return nil, fmt.Errorf("share %q has no identifier before \"=\"", cutText(part))
		}
		d, err := ParseDecimal(num)
		if err != nil {
			return nil, fmt.Errorf("share %q: mass percent: %w", cutText(part), err)
		}
		out = append(out, DeclaredShare{Identifier: id, MassPct: d.Float64()})
	}
	return out, nil
}

// FormatComposition writes a composition in the form parseComposition reads.
func FormatComposition(shares []DeclaredShare) string {
	var b strings.Builder
	for i, s := range shares {
		if i > 0 {
			b.WriteByte(';')
		}
		b.WriteString(s.Identifier)
		b.WriteByte('=')
		fmt.Fprintf(&b, "%g", s.MassPct)
	}
	return b.String()
}
