package controls

import "github.com/halovet/halovet/terms"

// Party is a Party's settings as far as control measures go.
type Party struct {
	Type terms.PartyType // Article 5 or non-Article 5; a non-Party follows no schedule
	HFC  terms.HFCGroup  // may stay unspecified when no Annex F figure is asked for
}

// Keys used in the applies_to column of the rulebook data.
const (
	keyNonA5        = "non-A5"
	keyA5           = "A5"
	keyNonA5Variant = "non-A5-variant"
	keyA5Group1     = "A5-group1"
	keyA5Group2     = "A5-group2"
)

// Validate checks that the type is Article 5 or non-Article 5 and that the HFC group, when
// set, matches it.
func (p Party) Validate() error {
	switch p.Type {
	case terms.PartyTypeNonArticle5, terms.PartyTypeArticle5:
	case terms.PartyTypeUnspecified:
		return fieldErr("party.type", "article-5 or non-article-5", "is not set")
	default:
		return fieldErr("party.type", "article-5 or non-article-5", "is %s: no control schedule applies to it", p.Type)
	}
	switch p.HFC {
	case terms.HFCGroupUnspecified:
	case terms.HFCGroupNonA5, terms.HFCGroupNonA5Variant:
		if p.Type != terms.PartyTypeNonArticle5 {
			return fieldErr("party.hfc", "a5-group-1 or a5-group-2 for an Article 5 Party",
				"%s does not fit an Article 5 Party", p.HFC)
		}
	case terms.HFCGroupA5Group1, terms.HFCGroupA5Group2:
		if p.Type != terms.PartyTypeArticle5 {
			return fieldErr("party.hfc", "non-a5 or non-a5-variant for a non-Article 5 Party",
				"%s does not fit a non-Article 5 Party", p.HFC)
		}
	default:
		return fieldErr("party.hfc", "non-a5, non-a5-variant, a5-group-1 or a5-group-2", "unknown value %d", int(p.HFC))
	}
	return nil
}

// typeKey is the applies_to key of the Party type (Annexes A to E).
func (p Party) typeKey() string {
	if p.Type == terms.PartyTypeArticle5 {
		return keyA5
	}
	return keyNonA5
}

// key is the applies_to key the rulebook uses for this Party and scope.
func (p Party) key(scope Scope) (string, error) {
	if err := p.Validate(); err != nil {
		return "", err
	}
	if scope != ScopeF {
		return p.typeKey(), nil
	}
	switch p.HFC {
	case terms.HFCGroupNonA5:
		return keyNonA5, nil
	case terms.HFCGroupNonA5Variant:
		return keyNonA5Variant, nil
	case terms.HFCGroupA5Group1:
		return keyA5Group1, nil
	case terms.HFCGroupA5Group2:
		return keyA5Group2, nil
	}
	return "", fieldErr("party.hfc", "non-a5, non-a5-variant, a5-group-1 or a5-group-2",
		"is not set, and Annex F figures depend on it")
}
