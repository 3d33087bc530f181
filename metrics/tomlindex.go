package metrics

import (
	"strconv"
	"strings"
)

// keyIndex records where each key and value of a TOML document sits. The
// TOML library reports positions only for syntax errors, so the loader keeps
// this small structural scan of its own to locate every key it checks. It
// runs only on documents the TOML library has already parsed successfully,
// so it may assume well-formed input.
type keyIndex struct {
	src   []byte
	keys  map[string]keyLoc
	order []string // full paths in order of first appearance
}

type keyLoc struct {
	key   [2]int // byte range of the key text
	value [2]int // byte range of the value text
	seq   int
}

// pathKey joins a key path for use as a map key.
func pathKey(path ...string) string { return strings.Join(path, "\x1f") }

func buildKeyIndex(src []byte) *keyIndex {
	ix := &keyIndex{src: src, keys: map[string]keyLoc{}}
	s := &tomlScan{src: src, ix: ix}
	s.document()
	return ix
}

func (ix *keyIndex) add(path []string, k, v [2]int) {
	p := pathKey(path...)
	if _, ok := ix.keys[p]; ok {
		return
	}
	ix.keys[p] = keyLoc{key: k, value: v, seq: len(ix.order)}
	ix.order = append(ix.order, p)
}

type tomlScan struct {
	src []byte
	i   int
	ix  *keyIndex
}

func (s *tomlScan) eof() bool { return s.i >= len(s.src) }
func (s *tomlScan) peek() byte {
	if s.eof() {
		return 0
	}
	return s.src[s.i]
}

func (s *tomlScan) skipSpace() {
	for !s.eof() && (s.src[s.i] == ' ' || s.src[s.i] == '\t') {
		s.i++
	}
}

// skipBlank skips whitespace, newlines and comments.
func (s *tomlScan) skipBlank() {
	for !s.eof() {
		switch s.src[s.i] {
		case ' ', '\t', '\r', '\n':
			s.i++
		case '#':
			for !s.eof() && s.src[s.i] != '\n' {
				s.i++
			}
		default:
			return
		}
	}
}

func (s *tomlScan) toEOL() {
	for !s.eof() && s.src[s.i] != '\n' {
		s.i++
	}
}

func (s *tomlScan) document() {
	var table []string
	arrayCount := map[string]int{}
	for {
		s.skipBlank()
		if s.eof() {
			return
		}
		if s.peek() == '[' {
			start := s.i
			s.i++
			isArray := false
			if s.peek() == '[' {
				isArray = true
				s.i++
			}
			s.skipSpace()
			path := s.keyPath()
			s.skipSpace()
			for !s.eof() && s.src[s.i] == ']' {
				s.i++
			}
			if isArray {
				p := pathKey(path...)
				n := arrayCount[p]
				arrayCount[p] = n + 1
				path = append(path, "#"+itoa(n))
			}
			s.ix.add(path, [2]int{start, s.i}, [2]int{start, s.i})
			// Implicit parents of a header get the header's position.
			for j := 1; j < len(path); j++ {
				s.ix.add(path[:j], [2]int{start, s.i}, [2]int{start, s.i})
			}
			table = path
			s.toEOL()
			continue
		}
		s.keyValue(table)
		s.toEOL()
	}
}

// keyValue scans `key = value` with keys relative to prefix.
func (s *tomlScan) keyValue(prefix []string) {
	kStart := s.i
	rel := s.keyPath()
	kEnd := s.i
	for kEnd > kStart && (s.src[kEnd-1] == ' ' || s.src[kEnd-1] == '\t') {
		kEnd--
	}
	s.skipSpace()
	if s.peek() != '=' {
		s.toEOL()
		return
	}
	s.i++
	s.skipSpace()
	path := append(append([]string{}, prefix...), rel...)
	for j := len(prefix) + 1; j < len(path); j++ {
		s.ix.add(path[:j], [2]int{kStart, kEnd}, [2]int{kStart, kEnd})
	}
	vStart := s.i
	s.value(path)
	vEnd := s.i
	for vEnd > vStart && (s.src[vEnd-1] == ' ' || s.src[vEnd-1] == '\t') {
		vEnd--
	}
	s.ix.add(path, [2]int{kStart, kEnd}, [2]int{vStart, vEnd})
}

// keyPath scans a dotted key of bare and quoted parts.
func (s *tomlScan) keyPath() []string {
	var parts []string
	for {
		s.skipSpace()
		switch s.peek() {
		case '"':
			parts = append(parts, s.basicString())
		case '\'':
			parts = append(parts, s.literalString())
		default:
			st := s.i
			for !s.eof() {
				c := s.src[s.i]
				if c == '_' || c == '-' || c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' {
					s.i++
					continue
				}
				break
			}
			parts = append(parts, string(s.src[st:s.i]))
		}
		s.skipSpace()
		if s.peek() != '.' {
			return parts
		}
		s.i++
	}
}

func (s *tomlScan) value(path []string) {
	switch s.peek() {
	case '"':
		if strings.HasPrefix(string(s.src[s.i:min(s.i+3, len(s.src))]), `"""`) {
			s.multiString(`"""`)
			return
		}
		s.basicString()
	case '\'':
		if strings.HasPrefix(string(s.src[s.i:min(s.i+3, len(s.src))]), `'''`) {
			s.multiString(`'''`)
			return
		}
		s.literalString()
	case '[':
		s.i++
		n := 0
		for {
			s.skipBlank()
			if s.eof() {
				return
			}
			if s.peek() == ']' {
				s.i++
				return
			}
			if s.peek() == ',' {
				s.i++
				continue
			}
			el := append(append([]string{}, path...), "#"+itoa(n))
			st := s.i
			s.value(el)
			s.ix.add(el, [2]int{st, s.i}, [2]int{st, s.i})
			n++
		}
	case '{':
		s.i++
		for {
			s.skipSpace()
			if s.eof() || s.peek() == '\n' {
				return
			}
			if s.peek() == '}' {
				s.i++
				return
			}
			if s.peek() == ',' {
				s.i++
				continue
			}
			s.keyValue(path)
		}
	default:
		for !s.eof() {
			c := s.src[s.i]
			if c == ',' || c == ']' || c == '}' || c == '\n' || c == '#' || c == '\r' {
				break
			}
			s.i++
		}
		// Trim trailing spaces from a scalar.
		for s.i > 0 && (s.src[s.i-1] == ' ' || s.src[s.i-1] == '\t') {
			s.i--
		}
		s.skipSpace()
	}
}

func (s *tomlScan) basicString() string {
	var b strings.Builder
	s.i++ // opening quote
	for !s.eof() {
		c := s.src[s.i]
		if c == '\\' && s.i+1 < len(s.src) {
			s.escape(&b)
			continue
		}
		s.i++
		if c == '"' || c == '\n' {
			break
		}
		b.WriteByte(c)
	}
	return b.String()
}

// escape decodes the escape sequence at s.i (TOML 1.0 basic strings, plus
// \e and \xHH of TOML 1.1) into b, so that quoted keys such as "a\u00e9"
// index under the same name the TOML library decodes.
func (s *tomlScan) escape(b *strings.Builder) {
	c := s.src[s.i+1]
	s.i += 2
	hex := 0
	switch c {
	case 'b':
		b.WriteByte('\b')
	case 't':
		b.WriteByte('\t')
	case 'n':
		b.WriteByte('\n')
	case 'f':
		b.WriteByte('\f')
	case 'r':
		b.WriteByte('\r')
	case 'e':
		b.WriteByte(0x1b)
	case 'x':
		hex = 2
	case 'u':
		hex = 4
	case 'U':
		hex = 8
	default:
		b.WriteByte(c)
	}
	if hex == 0 || s.i+hex > len(s.src) {
		return
	}
	r, err := strconv.ParseUint(string(s.src[s.i:s.i+hex]), 16, 32)
	if err != nil {
		return
	}
	s.i += hex
	b.WriteRune(rune(r))
}

func (s *tomlScan) literalString() string {
	s.i++
	st := s.i
	for !s.eof() && s.src[s.i] != '\'' && s.src[s.i] != '\n' {
		s.i++
	}
	v := string(s.src[st:s.i])
	if !s.eof() {
		s.i++
	}
	return v
}

func (s *tomlScan) multiString(delim string) {
	s.i += 3
	for !s.eof() {
		if delim[0] == '"' && s.src[s.i] == '\\' {
			s.i += 2
			continue
		}
		if strings.HasPrefix(string(s.src[s.i:min(s.i+3, len(s.src))]), delim) {
			s.i += 3
			// Up to two more quotes may belong to the content.
			for k := 0; k < 2 && !s.eof() && s.src[s.i] == delim[0]; k++ {
				s.i++
			}
			return
		}
		s.i++
	}
}

func itoa(n int) string {
	if n == 0 {
		return "0"
	}
	var b [20]byte
	i := len(b)
	for n > 0 {
		i--
		b[i] = byte('0' + n%10)
		n /= 10
	}
	return string(b[i:])
}
