package design

import (
	"sort"
	"strings"
)

// editDistance is the optimal-string-alignment distance between a and b,
// case-folded: Levenshtein's insertions, deletions and substitutions, plus
// swapping two adjacent letters, each costing 1.
func editDistance(a, b string) int {
	ra, rb := []rune(strings.ToLower(a)), []rune(strings.ToLower(b))
	prev2 := make([]int, len(rb)+1)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				cur[j] = min(cur[j], prev2[j-2]+1) // adjacent transposition: "gird" for "grid"
			}
		}
		prev2, prev, cur = prev, cur, prev2
	}
	return prev[len(rb)]
}

// Suggest returns the candidates closest to word, best first: those within
// an edit distance of about a third of the word's length (at least 1, at
// most 3), or that differ only by case or punctuation. It returns nil when
// nothing is close.
func Suggest(word string, candidates []string) []string {
	norm := func(s string) string {
		return strings.Map(func(r rune) rune {
			if r == '-' || r == '_' || r == ' ' || r == '.' {
				return -1
			}
			return r
		}, strings.ToLower(s))
	}
	limit := max(1, min(3, len([]rune(word))/3))
	type cand struct {
		s string
		d int
	}
	var cs []cand
	seen := map[string]bool{}
	for _, c := range candidates {
		if seen[c] || c == word {
			continue
		}
		seen[c] = true
		d := editDistance(word, c)
		if norm(word) == norm(c) {
			d = 0
		}
		if d <= limit {
			cs = append(cs, cand{c, d})
		}
	}
	sort.SliceStable(cs, func(i, j int) bool {
		if cs[i].d != cs[j].d {
			return cs[i].d < cs[j].d
		}
		return cs[i].s < cs[j].s
	})
	out := make([]string, 0, len(cs))
	for _, c := range cs {
		out = append(out, c.s)
	}
	if len(out) > 3 {
		out = out[:3]
	}
	return out
}

// didYouMean formats the suggestions as a sentence ending, or "".
func didYouMean(word string, candidates []string) string {
	s := Suggest(word, candidates)
	if len(s) == 0 {
		return ""
	}
	return "did you mean " + quoteList(s, "or") + "?"
}

func quoteList(words []string, conj string) string {
	q := make([]string, len(words))
	for i, w := range words {
		q[i] = "\"" + w + "\""
	}
	switch len(q) {
	case 0:
		return ""
	case 1:
		return q[0]
	}
	return strings.Join(q[:len(q)-1], ", ") + " " + conj + " " + q[len(q)-1]
}
