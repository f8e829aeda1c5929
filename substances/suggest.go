package substances

import "sort"

// "Did you mean" suggestions for an identifier that names nothing: catalogue names within
// a small edit distance.

// suggestKey is one catalogue name the suggestions are drawn from.
type suggestKey struct {
	key     string // normalized
	display string
	t       target
}

// maxSuggestions limits the "did you mean" list.
const maxSuggestions = 5

// suggestions lists catalogue names within a small edit distance of s, closest first, one
// name per entry.
func (c *Catalogue) suggestions(s string) []string {
	key := normalizeString(s)
	if key == "" {
		return nil
	}
	limit := 1
	switch n := len(key); {
	case n > 8:
		limit = 3
	case n > 3:
		limit = 2
	}
	type found struct {
		dist    int
		display string
		t       target
		desig   bool
	}
	best := map[target]found{}
	rows := make([]int, 2*(len(key)+limit+2))
	for _, sk := range c.suggest {
		if d := len(sk.key) - len(key); d > limit || -d > limit {
			continue
		}
		d := editDistance(key, sk.key, limit, rows)
		if d > limit {
			continue
		}
		f := found{dist: d, display: sk.display, t: sk.t, desig: sk.display == c.entryName(sk.t)}
		if old, ok := best[sk.t]; !ok || d < old.dist || (d == old.dist && f.desig && !old.desig) {
			best[sk.t] = f
		}
	}
	list := make([]found, 0, len(best))
	for _, f := range best {
		list = append(list, f)
	}
	sort.Slice(list, func(i, j int) bool {
		if list[i].dist != list[j].dist {
			return list[i].dist < list[j].dist
		}
		return naturalLess(list[i].display, list[j].display)
	})
	if len(list) > maxSuggestions {
		list = list[:maxSuggestions]
	}
	out := make([]string, len(list))
	for i, f := range list {
		out[i] = f.display
		if !f.desig {
			out[i] += " (" + c.entryName(f.t) + ")"
		}
	}
	return out
}

// editDistance is the Levenshtein distance between a and b (bytes), or limit+1 when it is
// larger than limit. rows is scratch space of at least 2×(len(b)+1) ints.
func editDistance(a, b string, limit int, rows []int) int {
	if len(rows) < 2*(len(b)+1) {
		rows = make([]int, 2*(len(b)+1))
	}
	prev := rows[:len(b)+1]
	cur := rows[len(b)+1 : 2*(len(b)+1)]
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		rowMin := cur[0]
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
			rowMin = min(rowMin, cur[j])
		}
		if rowMin > limit {
			return limit + 1
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}
