package recon

import (
	"fmt"
	"strings"

	"spotloom/capture"
)

// guessChannel picks the channel for a role the recipe leaves null, from
// capture.GuessRoles (run once per session): the most confident channel
// given that role.
func (s *Session) guessChannel(role string) (int, error) {
	if s.roles == nil {
		s.roles = capture.GuessRoles(s.rec)
	}
	best, conf := -1, -1.0
	var seen []string
	for _, g := range s.roles {
		seen = append(seen, fmt.Sprintf("%d=%s", g.Channel, g.Role))
		if g.Role == role && g.Confidence > conf {
			best, conf = g.Channel, g.Confidence
		}
	}
	if best < 0 {
		return -1, fmt.Errorf("channels.%s is null and no channel looks like %s %s channel (guessed roles: %s): name it in the recipe", role, article(role), role, strings.Join(seen, ", "))
	}
	return best, nil
}

// article is "an" before a vowel, else "a".
func article(word string) string {
	if word != "" && strings.ContainsRune("aeiou", rune(word[0])) {
		return "an"
	}
	return "a"
}
