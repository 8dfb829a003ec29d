package decode

import (
	"bytes"
	"strconv"
)

// drawnXObjects scans a page content stream (ISO 32000-1:2008, 7.8.2 and
// 8.4.4: operators q, Q, cm; 8.8 Do) and returns, for every XObject name
// painted with "/name Do", the current transformation matrix
// [a b c d e f] in force at its first use. Strings, arrays, dictionaries
// and inline images (BI … ID … EI, 8.9.7) are skipped.
func drawnXObjects(content []byte) map[string][6]float64 {
	out := map[string][6]float64{}
	ctm := [6]float64{1, 0, 0, 1, 0, 0}
	var stack [][6]float64
	var nums []float64
	lastName := ""
	s := content
	i := 0
	for i < len(s) {
		c := s[i]
		switch {
		case isSpace(c):
			i++
		case c == '%':
			for i < len(s) && s[i] != '\n' && s[i] != '\r' {
				i++
			}
		case c == '/':
			j := i + 1
			for j < len(s) && !isSpace(s[j]) && !isDelim(s[j]) {
				j++
			}
			lastName = string(s[i+1 : j])
			i = j
		case c == '(':
			depth := 0
			for ; i < len(s); i++ {
				if s[i] == '\\' {
					i++
					continue
				}
				if s[i] == '(' {
					depth++
				} else if s[i] == ')' {
					depth--
					if depth == 0 {
						i++
						break
					}
				}
			}
			nums = nums[:0]
		case c == '<' && i+1 < len(s) && s[i+1] == '<', c == '>' && i+1 < len(s) && s[i+1] == '>':
			i += 2
		case c == '<':
			for i < len(s) && s[i] != '>' {
				i++
			}
			i++
			nums = nums[:0]
		case c == '[' || c == ']' || c == '{' || c == '}' || c == '>' || c == ')':
			i++
		case c == '+' || c == '-' || c == '.' || (c >= '0' && c <= '9'):
			j := i + 1
			for j < len(s) && (s[j] == '.' || (s[j] >= '0' && s[j] <= '9')) {
				j++
			}
			if v, err := strconv.ParseFloat(string(s[i:j]), 64); err == nil {
				nums = append(nums, v)
			}
			i = j
		default:
			j := i
			for j < len(s) && !isSpace(s[j]) && !isDelim(s[j]) {
				j++
			}
			if j == i {
				j++
			}
			op := string(s[i:j])
			i = j
			switch op {
			case "q":
				if len(stack) < 1024 {
					stack = append(stack, ctm)
				}
			case "Q":
				if n := len(stack); n > 0 {
					ctm = stack[n-1]
					stack = stack[:n-1]
				}
			case "cm":
				if n := len(nums); n >= 6 {
					var m [6]float64
					copy(m[:], nums[n-6:])
					ctm = concat(m, ctm)
				}
			case "Do":
				if _, seen := out[lastName]; lastName != "" && !seen {
					out[lastName] = ctm
				}
			case "ID":
				// Inline image data runs to whitespace, "EI", whitespace.
				k := bytes.Index(s[i:], []byte("EI"))
				for k >= 0 {
					at := i + k
					if (at == 0 || isSpace(s[at-1])) && (at+2 == len(s) || isSpace(s[at+2])) {
						break
					}
					n := bytes.Index(s[at+2:], []byte("EI"))
					if n < 0 {
						k = -1
						break
					}
					k += 2 + n
				}
				if k < 0 {
					return out
				}
				i += k + 2
			}
			nums = nums[:0]
			lastName = ""
		}
	}
	return out
}

func isSpace(c byte) bool {
	return c == ' ' || c == '\n' || c == '\r' || c == '\t' || c == '\f' || c == 0
}

func isDelim(c byte) bool {
	switch c {
	case '(', ')', '<', '>', '[', ']', '{', '}', '/', '%':
		return true
	}
	return false
}
