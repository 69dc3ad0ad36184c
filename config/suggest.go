package config

// editDistance returns the Levenshtein distance between a and b, counted
// in runes: the fewest insertions, deletions and substitutions that turn
// one into the other.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
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
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}

// closest returns the candidate nearest to s by edit distance, if that
// distance is at most maxDist; "" otherwise. Ties go to the first
// candidate.
func closest(s string, candidates []string, maxDist int) string {
	best, bestD := "", maxDist+1
	for _, c := range candidates {
		if d := editDistance(s, c); d < bestD {
			best, bestD = c, d
		}
	}
	return best
}
