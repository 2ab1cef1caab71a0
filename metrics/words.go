package metrics

import "strconv"

// Plural is a count with its word: "1 hour", "3 hours" (an English plural
// by -s, which every word it is given takes).
func Plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return strconv.Itoa(n) + " " + word + "s"
}
