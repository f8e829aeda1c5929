package controls

// PartyType says which schedules a Party follows for Annexes A to E.
type PartyType int

// Party types. Which Party is which is configuration, never code.
const (
	PartyTypeUnset PartyType = iota
	NonArticle5              // a Party not operating under Article 5 para 1
	Article5                 // a Party operating under Article 5 para 1
)

func (t PartyType) String() string {
	switch t {
	case NonArticle5:
		return "non-Article 5"
	case Article5:
		return "Article 5"
	}
	return "unset"
}

// HFCGroup says which Kigali Amendment schedule a Party follows for Annex F.
type HFCGroup int

// HFC groups (Art. 2J paras 1–2, Art. 5 para 8 qua [V]).
const (
	HFCGroupUnset   HFCGroup = iota
	HFCNonA5                 // non-Article 5, main schedule (baseline 2011–2013 + 15 % HCFC)
	HFCNonA5Variant          // non-Article 5, Art. 2J para 2 schedule (+ 25 % HCFC)
	HFCA5Group1              // Article 5 Group 1 (baseline 2020–2022 + 65 % HCFC)
	HFCA5Group2              // Article 5 Group 2 (baseline 2024–2026 + 65 % HCFC)
)

func (g HFCGroup) String() string {
	switch g {
	case HFCNonA5:
		return "non-Article 5"
	case HFCNonA5Variant:
		return "non-Article 5 variant"
	case HFCA5Group1:
		return "Article 5 Group 1"
	case HFCA5Group2:
		return "Article 5 Group 2"
	}
	return "unset"
}

// Party is a Party's settings as far as control measures go.
type Party struct {
	Type PartyType
	HFC  HFCGroup // may stay unset when no Annex F figure is asked for
}

// Keys used in the applies_to column of the rulebook data.
const (
	keyNonA5        = "non-A5"
	keyA5           = "A5"
	keyNonA5Variant = "non-A5-variant"
	keyA5Group1     = "A5-group1"
	keyA5Group2     = "A5-group2"
)

// Validate checks that the type is set and that the HFC group, when set, matches it.
func (p Party) Validate() error {
	switch p.Type {
	case NonArticle5, Article5:
	default:
		return fieldErr("party.type", "NonArticle5 or Article5", "is not set")
	}
	switch p.HFC {
	case HFCGroupUnset:
	case HFCNonA5, HFCNonA5Variant:
		if p.Type != NonArticle5 {
			return fieldErr("party.hfc", "HFCA5Group1 or HFCA5Group2 for an Article 5 Party",
				"%s does not fit an Article 5 Party", p.HFC)
		}
	case HFCA5Group1, HFCA5Group2:
		if p.Type != Article5 {
			return fieldErr("party.hfc", "HFCNonA5 or HFCNonA5Variant for a non-Article 5 Party",
				"%s does not fit a non-Article 5 Party", p.HFC)
		}
	default:
		return fieldErr("party.hfc", "HFCNonA5, HFCNonA5Variant, HFCA5Group1 or HFCA5Group2", "unknown value %d", int(p.HFC))
	}
	return nil
}

// typeKey is the applies_to key of the Party type (Annexes A to E).
func (p Party) typeKey() string {
	if p.Type == Article5 {
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
	case HFCNonA5:
		return keyNonA5, nil
	case HFCNonA5Variant:
		return keyNonA5Variant, nil
	case HFCA5Group1:
		return keyA5Group1, nil
	case HFCA5Group2:
		return keyA5Group2, nil
	}
	return "", fieldErr("party.hfc", "HFCNonA5, HFCNonA5Variant, HFCA5Group1 or HFCA5Group2",
		"is not set, and Annex F figures depend on it")
}
