package strictjson

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"reflect"
	"slices"
	"strconv"
	"strings"
)

// Kind says what is wrong with a JSON file.
type Kind int

// The kinds of Error.
const (
	Syntax     Kind = iota // broken JSON
	Empty                  // no value at all, or the file ends inside one
	Trailing               // data after the top-level value
	UnknownKey             // a key the target type does not have
	Duplicate              // a key given twice in one object
	WrongType              // a value of the wrong JSON type or range
	Null                   // null where the target cannot be null
	Length                 // a fixed-size list with the wrong number of values
)

// Error is one problem of a JSON file: where it is, the dotted key it
// concerns and what is wrong.
type Error struct {
	Name         string // what the file holds: "recipe", "rig", "layout"
	Kind         Kind
	Key          string // dotted path, list items as [i]: "rows.calibration[3]"; "" at the top
	Line, Column int    // from 1; 0 when the place is not known
	Text         string // the message after the name
}

func (e *Error) Error() string { return e.Name + ": " + e.Text }

// Present holds the dotted keys a file gave, null values included, for
// checks of required keys after Decode.
type Present map[string]bool

// TrimBOM drops a UTF-8 byte-order mark from the start of data: editors
// on some systems write one, and RFC 8259 §8.1 lets a parser ignore it.
func TrimBOM(data []byte) []byte {
	return bytes.TrimPrefix(data, []byte("\xEF\xBB\xBF"))
}

// Decode reads one JSON value from data into v, a pointer, strictly. A
// UTF-8 byte-order mark is skipped. Every object key must be a field of
// the target struct (matched exactly by its json tag) and may appear only
// once; null is allowed only where the target is a pointer, a slice or a
// map or decodes itself; a fixed-size list must have exactly its number of
// values; nothing may follow the value. Fields absent from data keep the
// values v already holds. Every error is an *Error naming the key and its
// line:column, and name starts its message.
func Decode(data []byte, v any, name string) (Present, error) {
	data = TrimBOM(data)
	w := walker{data: data, name: name, dec: json.NewDecoder(bytes.NewReader(data)), present: Present{}}
	w.dec.UseNumber()
	t := reflect.TypeOf(v)
	if t == nil || t.Kind() != reflect.Pointer {
		return nil, fmt.Errorf("strictjson.Decode needs a pointer, got %T", v)
	}
	if err := w.value(t.Elem(), "", -1); err != nil {
		return nil, err
	}
	if at := w.start(); !errors.Is(w.tokenErr(), io.EOF) {
		return nil, w.errAt(Trailing, "", at, "after the end of the %s", name)
	}
	// The walk has checked keys, types and sizes; the standard decoder now
	// fills v and catches what remains (a whole number with a fraction, a
	// number out of range, a value a type's own UnmarshalJSON refuses).
	if err := json.Unmarshal(data, v); err != nil {
		return nil, w.describe(err)
	}
	return w.present, nil
}

// walker checks the token stream of data against a Go type.
type walker struct {
	data    []byte
	name    string
	dec     *json.Decoder
	present Present
}

var unmarshaler = reflect.TypeFor[json.Unmarshaler]()

// start is the offset of the next token: past white space and the
// separators the decoder has not consumed yet.
func (w *walker) start() int64 {
	off := w.dec.InputOffset()
	for off < int64(len(w.data)) {
		switch w.data[off] {
		case ' ', '\t', '\r', '\n', ',', ':':
			off++
			continue
		}
		break
	}
	return off
}

// errAt makes the error of the given kind at offset. The message starts
// with what is wrong there (the key, or the broken JSON), then the place,
// then the details: `key "a.b" at line 3, column 7 holds ...`.
func (w *walker) errAt(kind Kind, key string, offset int64, format string, args ...any) *Error {
	line, col := LineCol(w.data, offset)
	var subject string
	switch {
	case kind == UnknownKey:
		subject = "unknown key " + Quote(key)
	case key != "":
		subject = "key " + Quote(key)
	case kind == Syntax:
		subject = "broken JSON"
	case kind == Trailing:
		subject = "unexpected data"
	default:
		subject = "the value"
	}
	text := fmt.Sprintf("%s at line %d, column %d %s", subject, line, col, fmt.Sprintf(format, args...))
	return &Error{Name: w.name, Kind: kind, Key: key, Line: line, Column: col, Text: text}
}

func (w *walker) tokenErr() error {
	_, err := w.dec.Token()
	return err
}

// token reads the next token, turning decoder errors into *Error.
func (w *walker) token() (json.Token, int64, error) {
	at := w.start()
	tok, err := w.dec.Token()
	if err != nil {
		return nil, at, w.describe(err)
	}
	return tok, at, nil
}

// item is the path of list item i of key; it is built only when needed,
// since most items are numbers that pass.
func item(key string, i int) string { return key + "[" + strconv.Itoa(i) + "]" }

// value checks the next value against type t; key is its dotted path, or
// with index ≥ 0 the path of the list that holds it.
func (w *walker) value(t reflect.Type, key string, index int) error {
	if index >= 0 {
		if !w.scalarNext() {
			key, index = item(key, index), -1
		} else {
			// Scalars are checked here with the key built only on error.
			return w.scalar(t, key, index)
		}
	}
	tok, at, err := w.token()
	if err != nil {
		return err
	}
	if tok == nil { // null
		switch {
		case t.Kind() == reflect.Pointer, t.Kind() == reflect.Slice, t.Kind() == reflect.Map,
			t.Kind() == reflect.Interface, reflect.PointerTo(t).Implements(unmarshaler):
			return nil
		}
		return w.errAt(Null, key, at, "is null: give %s", typeWord(t))
	}
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if t.Kind() == reflect.Interface {
		return w.skip(tok)
	}
	if reflect.PointerTo(t).Implements(unmarshaler) {
		// The type reads itself: let it judge the value here, where the
		// key and the place are known.
		if err := w.skip(tok); err != nil {
			return err
		}
		raw := w.data[at:w.dec.InputOffset()]
		if err := reflect.New(t).Interface().(json.Unmarshaler).UnmarshalJSON(raw); err != nil {
			return w.errAt(WrongType, key, at, "is not valid: %s", clipMessage(err.Error()))
		}
		return nil
	}
	switch d := tok.(type) {
	case json.Delim:
		switch {
		case d == '{' && t.Kind() == reflect.Struct:
			return w.object(t, key)
		case d == '{' && t.Kind() == reflect.Map && t.Key().Kind() == reflect.String:
			return w.mapObject(t, key)
		case d == '[' && (t.Kind() == reflect.Slice || t.Kind() == reflect.Array):
			return w.list(t, key, at)
		}
	default:
		if scalarFits(tok, t) {
			return nil
		}
	}
	return w.errAt(WrongType, key, at, "holds %s, expected %s", jsonWord(tok), typeWord(t))
}

// scalarFits reports whether a number, text or bool token suits type t.
func scalarFits(tok json.Token, t reflect.Type) bool {
	switch tok.(type) {
	case json.Number:
		return isNumberKind(t.Kind())
	case string:
		return t.Kind() == reflect.String
	case bool:
		return t.Kind() == reflect.Bool
	}
	return false
}

// scalarNext reports whether the next value is a number, text or a bool of
// a plain type (no null, no list, no object).
func (w *walker) scalarNext() bool {
	at := w.start()
	if at >= int64(len(w.data)) {
		return false
	}
	switch c := w.data[at]; {
	case c == '"', c == '-', c == 't', c == 'f', c >= '0' && c <= '9':
		return true
	}
	return false
}

// scalar checks a number, text or bool that is list item index of key.
func (w *walker) scalar(t reflect.Type, key string, index int) error {
	if t.Kind() == reflect.Pointer || t.Kind() == reflect.Interface || reflect.PointerTo(t).Implements(unmarshaler) {
		return w.value(t, item(key, index), -1)
	}
	tok, at, err := w.token()
	if err != nil {
		return err
	}
	if scalarFits(tok, t) {
		return nil
	}
	return w.errAt(WrongType, item(key, index), at, "holds %s, expected %s", jsonWord(tok), typeWord(t))
}

// object checks the members of an object against struct type t.
func (w *walker) object(t reflect.Type, key string) error {
	fields := map[string]reflect.Type{}
	var names []string
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		if name == "-" || !f.IsExported() {
			continue
		}
		if name == "" {
			name = f.Name
		}
		fields[name] = f.Type
		names = append(names, name)
	}
	seen := map[string]int64{}
	for w.dec.More() {
		tok, at, err := w.token()
		if err != nil {
			return err
		}
		k := tok.(string) // the decoder only gives string keys
		path := join(key, k)
		ft, ok := fields[k]
		if !ok {
			where := "the " + w.name
			if key != "" {
				where = Quote(key)
			}
			return w.errAt(UnknownKey, path, at, "in %s: allowed keys are %s", where, strings.Join(names, ", "))
		}
		if first, dup := seen[k]; dup {
			line, col := LineCol(w.data, first)
			return w.errAt(Duplicate, path, at, "is given twice (first at line %d, column %d)", line, col)
		}
		seen[k] = at
		w.present[path] = true
		if err := w.value(ft, path, -1); err != nil {
			return err
		}
	}
	_, _, err := w.token() // '}'
	return err
}

// mapObject checks the members of an object read into a map.
func (w *walker) mapObject(t reflect.Type, key string) error {
	seen := map[string]int64{}
	for w.dec.More() {
		tok, at, err := w.token()
		if err != nil {
			return err
		}
		k := tok.(string)
		path := join(key, k)
		if first, dup := seen[k]; dup {
			line, col := LineCol(w.data, first)
			return w.errAt(Duplicate, path, at, "is given twice (first at line %d, column %d)", line, col)
		}
		seen[k] = at
		w.present[path] = true
		if err := w.value(t.Elem(), path, -1); err != nil {
			return err
		}
	}
	_, _, err := w.token()
	return err
}

// list checks the items of a list against slice or array type t; a
// fixed-size array must get exactly its length.
func (w *walker) list(t reflect.Type, key string, at int64) error {
	n := 0
	for w.dec.More() {
		if t.Kind() == reflect.Array && n == t.Len() {
			return w.errAt(Length, key, at, "has more than %d values: expected exactly %d", t.Len(), t.Len())
		}
		if err := w.value(t.Elem(), key, n); err != nil {
			return err
		}
		n++
	}
	if _, _, err := w.token(); err != nil { // ']'
		return err
	}
	if t.Kind() == reflect.Array && n != t.Len() {
		return w.errAt(Length, key, at, "has %d values: expected exactly %d", n, t.Len())
	}
	return nil
}

// skip reads past the rest of a value whose first token is tok.
func (w *walker) skip(tok json.Token) error {
	if _, ok := tok.(json.Delim); !ok {
		return nil
	}
	for depth := 1; depth > 0; {
		tok, _, err := w.token()
		if err != nil {
			return err
		}
		if d, ok := tok.(json.Delim); ok {
			if d == '{' || d == '[' {
				depth++
			} else {
				depth--
			}
		}
	}
	return nil
}

// describe turns an error of encoding/json into an *Error with a place.
func (w *walker) describe(err error) error {
	var syn *json.SyntaxError
	var typ *json.UnmarshalTypeError
	switch {
	case errors.Is(err, io.EOF), errors.Is(err, io.ErrUnexpectedEOF):
		return &Error{Name: w.name, Kind: Empty, Text: fmt.Sprintf("the file is empty or ends before the %s does", w.name)}
	case errors.As(err, &syn):
		return w.errAt(Syntax, "", syn.Offset, "(%s)", clipMessage(syn.Error()))
	case errors.As(err, &typ):
		// The offset is just past the value; point at its start.
		off := typ.Offset
		for off > 0 && !isSpace(w.data[off-1]) && w.data[off-1] != ':' && w.data[off-1] != ',' && w.data[off-1] != '[' {
			off--
		}
		return w.errAt(WrongType, typ.Field, off, "holds a JSON %s, expected %s", clipValue(typ.Value), typeWord(typ.Type))
	}
	return &Error{Name: w.name, Kind: WrongType, Text: clipMessage(err.Error())}
}

func isSpace(c byte) bool { return c == ' ' || c == '\t' || c == '\r' || c == '\n' }

// clipValue keeps "number 1e999…" short: the decoder quotes the literal.
func clipValue(v string) string {
	kind, lit, ok := strings.Cut(v, " ")
	if !ok || len(lit) <= QuoteLimit {
		return v
	}
	return kind + " " + lit[:QuoteLimit] + "… (" + Count(len(lit)) + " characters)"
}

// clipMessage bounds a message from a decoder or a type's UnmarshalJSON,
// which may quote the input.
func clipMessage(s string) string {
	s = strings.TrimPrefix(s, "json: ")
	if len(s) <= 4*QuoteLimit {
		return s
	}
	return s[:4*QuoteLimit] + "…"
}

func jsonWord(tok json.Token) string {
	switch d := tok.(type) {
	case json.Delim:
		if d == '{' {
			return "an object"
		}
		return "a list"
	case json.Number:
		return "the number " + clipValue("n " + d.String())[2:]
	case string:
		return "the text " + Quote(d)
	case bool:
		return fmt.Sprintf("%v", d)
	}
	return "null"
}

func isNumberKind(k reflect.Kind) bool {
	return slices.Contains([]reflect.Kind{reflect.Float64, reflect.Float32, reflect.Int, reflect.Int8, reflect.Int16,
		reflect.Int32, reflect.Int64, reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64}, k)
}

// typeWord names what a Go type reads, in plain words.
func typeWord(t reflect.Type) string {
	switch t.Kind() {
	case reflect.Float64, reflect.Float32:
		return "a number"
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return "a whole number"
	case reflect.Bool:
		return "true or false"
	case reflect.String:
		return "text in quotes"
	case reflect.Slice:
		return "a list [...]"
	case reflect.Array:
		return fmt.Sprintf("a list of %d values", t.Len())
	case reflect.Struct, reflect.Map:
		return "an object {...}"
	case reflect.Pointer:
		return typeWord(t.Elem()) + " or null"
	}
	return t.String()
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

// LineCol turns a byte offset of data into a line and a column, both from
// 1; the column counts bytes.
func LineCol(data []byte, offset int64) (line, col int) {
	offset = min(max(offset, 0), int64(len(data)))
	head := data[:offset]
	line = 1 + bytes.Count(head, []byte("\n"))
	col = len(head) - (bytes.LastIndexByte(head, '\n') + 1) + 1
	return line, col
}
