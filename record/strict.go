package record

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strings"
)

// checkKeys walks the JSON in data and refuses an object holding the same
// key twice, or two keys that differ only in letter case. encoding/json
// matches keys to fields case-insensitively and lets the last duplicate
// win, while other readers keep the first or refuse: a record read one way
// by sluice and another way by a person's script must not verify.
func checkKeys(data []byte, source string) error {
	if l, c, msg := duplicateKey(data); msg != "" {
		return fmt.Errorf("%s:%d:%d: %s", source, l, c, msg)
	}
	return nil
}

// duplicateKey returns the position of the first key repeated in its
// object, exactly or in another letter case, and what is wrong; msg is ""
// when there is none (or the JSON is malformed, which the decoder reports).
func duplicateKey(data []byte) (line, col int, msg string) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	type frame struct {
		object  bool
		wantKey bool
		keys    map[string]string // folded → as written
	}
	var stack []*frame
	for {
		off := dec.InputOffset()
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			return 0, 0, ""
		}
		if err != nil {
			return 0, 0, "" // syntax errors are reported by the decoder proper
		}
		var top *frame
		if len(stack) > 0 {
			top = stack[len(stack)-1]
		}
		if top != nil && top.object && top.wantKey {
			if k, ok := tok.(string); ok {
				top.wantKey = false
				folded := strings.ToLower(k)
				if prev, dup := top.keys[folded]; dup {
					l, c := position(data, skipSpace(data, off))
					if prev == k {
						return l, c, fmt.Sprintf("key %q appears twice in the same object; each field is given once", k)
					}
					return l, c, fmt.Sprintf("key %q differs from key %q only in letter case; keys are exact and each field is given once", k, prev)
				}
				top.keys[folded] = k
				continue
			}
		}
		switch tok {
		case json.Delim('{'):
			stack = append(stack, &frame{object: true, wantKey: true, keys: map[string]string{}})
			continue
		case json.Delim('['):
			stack = append(stack, &frame{})
			continue
		case json.Delim('}'), json.Delim(']'):
			stack = stack[:len(stack)-1]
		}
		if len(stack) > 0 && stack[len(stack)-1].object {
			stack[len(stack)-1].wantKey = true // a value ended: the next token is a key
		}
	}
}

// skipSpace moves off past JSON whitespace and a separating comma or colon,
// to the first byte of the next token.
func skipSpace(data []byte, off int64) int64 {
	for off < int64(len(data)) {
		switch data[off] {
		case ' ', '\t', '\r', '\n', ',', ':':
			off++
		default:
			return off
		}
	}
	return off
}

// checkCanonical refuses a record whose bytes are not what MarshalDecision
// writes for its content. Records are machine-written and signed byte for
// byte; a record in any other form (a key in another case, reordered or
// reformatted fields) was not written by sluice.
func checkCanonical(data []byte, d *Decision, source string) error {
	want, err := MarshalDecision(d)
	if err != nil {
		return fmt.Errorf("%s: %v", source, err)
	}
	if bytes.Equal(want, data) {
		return nil
	}
	i := 0
	for i < len(want) && i < len(data) && want[i] == data[i] {
		i++
	}
	l, c := position(data, int64(i))
	return fmt.Errorf("%s:%d:%d: the record is not in the form sluice writes (found %s, sluice writes %s there); a record is written by sluice propose and signed byte for byte, never edited",
		source, l, c, snippet(data, i), snippet(want, i))
}

func snippet(b []byte, i int) string {
	end := min(len(b), i+24)
	if i >= len(b) {
		return "the end of the file"
	}
	s := string(b[i:end])
	if nl := strings.IndexByte(s, '\n'); nl >= 0 {
		s = s[:nl]
	}
	return fmt.Sprintf("%q", s)
}
