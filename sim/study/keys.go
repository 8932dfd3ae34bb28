package study

import (
	"bufio"
	"bytes"
	"fmt"
	"strings"
)

// keyLines maps the dotted path of every key and table header in a TOML
// file to its line. The TOML decoder does not expose key positions, so
// this light scanner recovers them for error messages; it only has to be
// right for files the decoder has already accepted.
//
// Array-of-table entries are numbered from zero: "arm[1].family".
type keyLines map[string]int

func scanKeyLines(src []byte) keyLines {
	lines := keyLines{}
	counts := map[string]int{}
	table := ""
	sc := bufio.NewScanner(bytes.NewReader(src))
	sc.Buffer(make([]byte, 0, 64*1024), 1<<20)
	inMultiline := ""
	for n := 1; sc.Scan(); n++ {
		text := strings.TrimSpace(sc.Text())
		if inMultiline != "" {
			if strings.Contains(text, inMultiline) {
				inMultiline = ""
			}
			continue
		}
		switch {
		case text == "" || strings.HasPrefix(text, "#"):
			continue
		case strings.HasPrefix(text, "[["):
			name := headerName(text, "[[", "]]")
			table = fmt.Sprintf("%s[%d]", name, counts[name])
			counts[name]++
			lines[table] = n
			if _, seen := lines[name]; !seen {
				lines[name] = n
			}
			continue
		case strings.HasPrefix(text, "["):
			table = headerName(text, "[", "]")
			// [arm.censoring] belongs to the latest [[arm]].
			if head, rest, dotted := strings.Cut(table, "."); dotted && counts[head] > 0 {
				table = fmt.Sprintf("%s[%d].%s", head, counts[head]-1, rest)
			}
			lines[table] = n
			continue
		}
		eq := strings.IndexByte(text, '=')
		if eq <= 0 {
			continue
		}
		key := unquoteKey(strings.TrimSpace(text[:eq]))
		path := key
		if table != "" {
			path = table + "." + key
		}
		if _, seen := lines[path]; !seen {
			lines[path] = n
		}
		rest := text[eq+1:]
		for _, q := range []string{`"""`, `'''`} {
			if strings.Count(rest, q) == 1 {
				inMultiline = q
			}
		}
	}
	return lines
}

func headerName(text, open, close string) string {
	text = strings.TrimPrefix(text, open)
	if i := strings.Index(text, close); i >= 0 {
		text = text[:i]
	}
	return unquoteKey(strings.TrimSpace(text))
}

func unquoteKey(k string) string {
	parts := strings.Split(k, ".")
	for i, p := range parts {
		parts[i] = strings.Trim(strings.TrimSpace(p), `"'`)
	}
	return strings.Join(parts, ".")
}

// line returns the line of path, or of its nearest enclosing table, or 0.
func (kl keyLines) line(path string) int {
	for path != "" {
		if n, ok := kl[path]; ok {
			return n
		}
		i := strings.LastIndexByte(path, '.')
		if i < 0 {
			break
		}
		path = path[:i]
	}
	return 0
}
