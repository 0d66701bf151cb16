package ingest

import (
	"bytes"
)

// recordReader splits delimited text (CSV after RFC 4180, or TSV after the
// IANA text/tab-separated-values registration, with the same quoting) into
// records. The separator is taken from the first record (the header) when
// sep is 0. A field may be enclosed in double quotes; inside, a doubled quote
// stands for one quote, and separators and line breaks are part of the
// field. Spaces around unquoted fields and around quoted ones are removed. A
// quote inside an unquoted field is kept as text. Blank lines are skipped.
// Fields alias internal buffers and are valid until the next call to next.
type recordReader struct {
	s      *lineScanner
	name   string
	sep    byte
	fields [][]byte
	quoted []bool
	line   int // line where the current record starts

	scratch []byte // field text of records that needed unquoting
	ends    []int  // where each field ends in scratch
	err     error
}

// next reads the next record into r.fields and reports whether there was
// one; after false, r.err holds the error, if any.
func (r *recordReader) next() bool {
	for {
		if !r.s.next() {
			r.err = r.s.failure(r.name)
			return false
		}
		if len(bytes.Trim(r.s.text, " ")) > 0 {
			break
		}
	}
	r.line = r.s.line
	line := r.s.text
	if r.sep == 0 {
		r.sep = detectSeparator(line)
	}
	r.fields, r.quoted = r.fields[:0], r.quoted[:0]
	if bytes.IndexByte(line, '"') < 0 {
		for {
			i := bytes.IndexByte(line, r.sep)
			if i < 0 {
				r.add(bytes.Trim(line, " "), false)
				return true
			}
			r.add(bytes.Trim(line[:i], " "), false)
			line = line[i+1:]
		}
	}
	r.err = r.unquote(line)
	return r.err == nil
}

func (r *recordReader) add(f []byte, quoted bool) {
	r.fields = append(r.fields, f)
	r.quoted = append(r.quoted, quoted)
}

// unquote splits a record holding quotes, reading more lines while a quoted
// field spans line breaks.
func (r *recordReader) unquote(line []byte) error {
	r.scratch, r.ends = r.scratch[:0], r.ends[:0]
	i := 0
	for {
		// One field starts at i.
		for i < len(line) && line[i] == ' ' {
			i++
		}
		if i < len(line) && line[i] == '"' {
			openLine := r.s.line
			i++
			for {
				j := bytes.IndexByte(line[i:], '"')
				if j < 0 {
					r.scratch = append(r.scratch, line[i:]...)
					r.scratch = append(r.scratch, '\n')
					if !r.s.next() {
						if err := r.s.failure(r.name); err != nil {
							return err
						}
						return errorf(r.name, openLine, len(r.ends)+1, ErrQuote, "quoted field is not closed before the end of the file")
					}
					line, i = r.s.text, 0
					continue
				}
				r.scratch = append(r.scratch, line[i:i+j]...)
				i += j + 1
				if i < len(line) && line[i] == '"' {
					r.scratch = append(r.scratch, '"')
					i++
					continue
				}
				break
			}
			for i < len(line) && line[i] == ' ' {
				i++
			}
			r.ends = append(r.ends, len(r.scratch))
			r.quoted = append(r.quoted, true)
			if i == len(line) {
				break
			}
			if line[i] != r.sep {
				return errorf(r.name, r.s.line, len(r.ends), ErrQuote, "unexpected %s after a closing quote", quote(line[i:i+1]))
			}
			i++ // past the separator; a line ending in one has an empty last field
			continue
		}
		j := bytes.IndexByte(line[i:], r.sep)
		end := len(line)
		if j >= 0 {
			end = i + j
		}
		r.scratch = append(r.scratch, bytes.TrimRight(line[i:end], " ")...)
		r.ends = append(r.ends, len(r.scratch))
		r.quoted = append(r.quoted, false)
		if j < 0 {
			break
		}
		i = end + 1
	}
	start := 0
	for _, end := range r.ends {
		r.fields = append(r.fields, r.scratch[start:end:end])
		start = end
	}
	return nil
}

// detectSeparator returns the separator of a header line: a tab when the
// line holds at least as many tabs as commas outside quotes and at least
// one, else a comma.
func detectSeparator(line []byte) byte {
	tabs, commas := 0, 0
	in := false
	for _, c := range line {
		switch c {
		case '"':
			in = !in
		case '\t':
			if !in {
				tabs++
			}
		case ',':
			if !in {
				commas++
			}
		}
	}
	if tabs > 0 && tabs >= commas {
		return '\t'
	}
	return ','
}
