package terms

import "database/sql/driver"

// PartyType is the status of a country under the Montreal Protocol.
type PartyType int

// Party types.
const (
	PartyTypeUnspecified PartyType = iota
	PartyTypeArticle5              // a Party operating under Article 5 para 1
	PartyTypeNonArticle5           // a Party not operating under Article 5 para 1
	PartyTypeNonParty              // not a Party to the Protocol
)

var partyTypes = &vocab{what: "party type", prefix: "partytype",
	names:   []string{"", "article-5", "non-article-5", "non-party"},
	aliases: map[string]int{"a5": 1, "nona5": 2, "notaparty": 3}}

// String returns "article-5", "non-article-5", "non-party", or "" when unspecified.
func (t PartyType) String() string { return partyTypes.name(int(t), "party-type") }

// Valid reports whether t is one of the declared values (Unspecified included).
func (t PartyType) Valid() bool { return t >= 0 && int(t) < len(partyTypes.names) }

// ParsePartyType reads a Party type; empty text gives PartyTypeUnspecified.
func ParsePartyType(s string) (PartyType, error) {
	i, err := partyTypes.parse(s)
	return PartyType(i), err
}

// PartyTypes lists the specified Party types.
func PartyTypes() []PartyType { return values[PartyType](partyTypes) }

// Scan implements sql.Scanner.
func (t *PartyType) Scan(src any) error {
	i, err := partyTypes.scan(src)
	*t = PartyType(i)
	return err
}

// Value implements driver.Valuer.
func (t PartyType) Value() (driver.Value, error) { return partyTypes.value(int(t), "party-type") }

// HFCGroup is the Kigali Amendment schedule a Party follows for Annex F (Art. 2J paras 1–2,
// Art. 5 para 8 qua).
type HFCGroup int

// HFC schedule groups.
const (
	HFCGroupUnspecified  HFCGroup = iota
	HFCGroupA5Group1              // Article 5 Group 1 (baseline 2020–2022 + 65 % HCFC)
	HFCGroupA5Group2              // Article 5 Group 2 (baseline 2024–2026 + 65 % HCFC)
	HFCGroupNonA5                 // non-Article 5, main schedule (baseline 2011–2013 + 15 % HCFC)
	HFCGroupNonA5Variant          // non-Article 5, Art. 2J para 2 schedule (+ 25 % HCFC)
)

var hfcGroups = &vocab{what: "HFC group", prefix: "hfcgroup",
	names: []string{"", "a5-group-1", "a5-group-2", "non-a5", "non-a5-variant"}}

// String returns "a5-group-1", "a5-group-2", "non-a5", "non-a5-variant", or "" when
// unspecified.
func (g HFCGroup) String() string { return hfcGroups.name(int(g), "hfc-group") }

// Valid reports whether g is one of the declared values (Unspecified included).
func (g HFCGroup) Valid() bool { return g >= 0 && int(g) < len(hfcGroups.names) }

// Article5 reports whether the group is one of the Article 5 schedules.
func (g HFCGroup) Article5() bool { return g == HFCGroupA5Group1 || g == HFCGroupA5Group2 }

// ParseHFCGroup reads an HFC group; empty text gives HFCGroupUnspecified.
func ParseHFCGroup(s string) (HFCGroup, error) { i, err := hfcGroups.parse(s); return HFCGroup(i), err }

// HFCGroups lists the specified HFC groups.
func HFCGroups() []HFCGroup { return values[HFCGroup](hfcGroups) }

// Scan implements sql.Scanner.
func (g *HFCGroup) Scan(src any) error { i, err := hfcGroups.scan(src); *g = HFCGroup(i); return err }

// Value implements driver.Valuer.
func (g HFCGroup) Value() (driver.Value, error) { return hfcGroups.value(int(g), "hfc-group") }

// Direction of a shipment as seen from the reporting Party.
type Direction int

// Directions.
const (
	DirectionUnspecified Direction = iota
	DirectionImport
	DirectionExport
	DirectionReExport
	DirectionTransit
)

var directions = &vocab{what: "direction", prefix: "direction",
	names:   []string{"", "import", "export", "re-export", "transit"},
	aliases: map[string]int{"imp": 1, "in": 1, "exp": 2, "out": 2}}

// String returns the lower-case word used in files ("re-export"), or "" when unspecified.
func (d Direction) String() string { return directions.name(int(d), "direction") }

// Valid reports whether d is one of the declared values (Unspecified included).
func (d Direction) Valid() bool { return d >= 0 && int(d) < len(directions.names) }

// Outgoing reports whether the goods leave the reporting Party (export or re-export).
func (d Direction) Outgoing() bool { return d == DirectionExport || d == DirectionReExport }

// ParseDirection reads a direction ("Re-Export", "RE_EXPORT", "DIRECTION_IMPORT"; also
// "imp", "in", "exp", "out"). Empty text gives DirectionUnspecified and no error.
func ParseDirection(s string) (Direction, error) {
	i, err := directions.parse(s)
	return Direction(i), err
}

// Directions lists the specified directions.
func Directions() []Direction { return values[Direction](directions) }

// Scan implements sql.Scanner.
func (d *Direction) Scan(src any) error {
	i, err := directions.scan(src)
	*d = Direction(i)
	return err
}

// Value implements driver.Valuer.
func (d Direction) Value() (driver.Value, error) { return directions.value(int(d), "direction") }

// Purpose declared for the substance.
type Purpose int

// Purposes.
const (
	PurposeUnspecified Purpose = iota
	PurposeServicing
	PurposeManufacturing
	PurposeFeedstock
	PurposeProcessAgent
	PurposeQPS
	PurposeLaboratory
	PurposeDestruction
	PurposeEssentialUse
	PurposeCriticalUse
	PurposeOther
	PurposeFireProtectionServicing // servicing fire suppression and fire protection equipment
	PurposeRocketEngineSolvent     // solvent in rocket-engine manufacture
	PurposeMedicalAerosolBurns     // topical medical aerosols for the treatment of burns
)

var purposes = &vocab{what: "purpose", prefix: "purpose",
	names: []string{"", "servicing", "manufacturing", "feedstock", "process-agent", "qps",
		"laboratory", "destruction", "essential-use", "critical-use", "other",
		"fire-protection-servicing", "rocket-engine-solvent", "medical-aerosol-burns"},
	aliases: map[string]int{"service": 1, "manufacture": 2,
		"quarantineandpreshipment": 5, "quarantinepreshipment": 5,
		"lab": 6, "laboratoryandanalytical": 6, "analytical": 6,
		"essential": 8, "critical": 9,
		"fireprotection": 11, "firesuppression": 11, "rocketengine": 12, "medicalaerosol": 13}}

// String returns the lower-case word used in files ("process-agent"), or "" when unspecified.
func (p Purpose) String() string { return purposes.name(int(p), "purpose") }

// Valid reports whether p is one of the declared values (Unspecified included).
func (p Purpose) Valid() bool { return p >= 0 && int(p) < len(purposes.names) }

// ParsePurpose reads a purpose ("process agent", "PURPOSE_QPS"; also a few common short
// forms such as "lab" and "critical"). Empty text gives PurposeUnspecified and no error.
func ParsePurpose(s string) (Purpose, error) { i, err := purposes.parse(s); return Purpose(i), err }

// Purposes lists the specified purposes.
func Purposes() []Purpose { return values[Purpose](purposes) }

// Scan implements sql.Scanner.
func (p *Purpose) Scan(src any) error { i, err := purposes.scan(src); *p = Purpose(i); return err }

// Value implements driver.Valuer.
func (p Purpose) Value() (driver.Value, error) { return purposes.value(int(p), "purpose") }

// Condition of the substance.
type Condition int

// Conditions.
const (
	ConditionUnspecified Condition = iota
	ConditionVirgin
	ConditionUsed
	ConditionRecycled
	ConditionReclaimed
)

var conditions = &vocab{what: "condition", prefix: "condition",
	names:   []string{"", "virgin", "used", "recycled", "reclaimed"},
	aliases: map[string]int{"new": 1, "recovered": 2}}

// String returns the lower-case word used in files, or "" when unspecified.
func (c Condition) String() string { return conditions.name(int(c), "condition") }

// Valid reports whether c is one of the declared values (Unspecified included).
func (c Condition) Valid() bool { return c >= 0 && int(c) < len(conditions.names) }

// Recovered reports whether the material is used, recycled or reclaimed.
func (c Condition) Recovered() bool {
	return c == ConditionUsed || c == ConditionRecycled || c == ConditionReclaimed
}

// ParseCondition reads a condition ("CONDITION_USED"; also "new" for virgin and "recovered"
// for used). Empty text gives ConditionUnspecified and no error.
func ParseCondition(s string) (Condition, error) {
	i, err := conditions.parse(s)
	return Condition(i), err
}

// Conditions lists the specified conditions.
func Conditions() []Condition { return values[Condition](conditions) }

// Scan implements sql.Scanner.
func (c *Condition) Scan(src any) error {
	i, err := conditions.scan(src)
	*c = Condition(i)
	return err
}

// Value implements driver.Valuer.
func (c Condition) Value() (driver.Value, error) { return conditions.value(int(c), "condition") }

// LicenceStatus is the state of a licence.
type LicenceStatus int

// Licence states.
const (
	LicenceStatusUnspecified LicenceStatus = iota
	LicenceDraft
	LicenceActive
	LicenceSuspended
	LicenceRevoked
)

var licenceStatuses = &vocab{what: "licence status", prefix: "licencestatus",
	names: []string{"", "draft", "active", "suspended", "revoked"}}

// String returns "draft", "active", "suspended", "revoked", or "" when unspecified.
func (s LicenceStatus) String() string { return licenceStatuses.name(int(s), "status") }

// Valid reports whether s is one of the declared values (Unspecified included).
func (s LicenceStatus) Valid() bool { return s >= 0 && int(s) < len(licenceStatuses.names) }

// ParseLicenceStatus reads a licence status; empty text gives LicenceStatusUnspecified.
func ParseLicenceStatus(s string) (LicenceStatus, error) {
	i, err := licenceStatuses.parse(s)
	return LicenceStatus(i), err
}

// LicenceStatuses lists the specified licence states.
func LicenceStatuses() []LicenceStatus { return values[LicenceStatus](licenceStatuses) }

// Scan implements sql.Scanner.
func (s *LicenceStatus) Scan(src any) error {
	i, err := licenceStatuses.scan(src)
	*s = LicenceStatus(i)
	return err
}

// Value implements driver.Valuer.
func (s LicenceStatus) Value() (driver.Value, error) { return licenceStatuses.value(int(s), "status") }

// QuotaUnit is the unit a quota line is counted in.
type QuotaUnit int

// Quota units.
const (
	QuotaUnitUnspecified QuotaUnit = iota
	QuotaMetricTonnes              // metric tonnes of substance
	QuotaODPTonnes                 // ODP tonnes
	QuotaCO2eTonnes                // CO2-equivalent tonnes with the Protocol's GWPs
)

var quotaUnits = &vocab{what: "quota unit", prefix: "quotaunit",
	names: []string{"", "metric-t", "odp-t", "co2e-t"},
	aliases: map[string]int{"metrictonnes": 1, "t": 1, "odptonnes": 2,
		"co2etonnes": 3, "co2eqt": 3}}

var quotaSymbols = [...]string{"", "t", "ODP t", "CO2-eq t"}

// String returns the word stored and typed on the command line: "metric-t", "odp-t",
// "co2e-t", or "" when unspecified.
func (u QuotaUnit) String() string { return quotaUnits.name(int(u), "unit") }

// Symbol returns the unit as printed beside a figure: "t", "ODP t" or "CO2-eq t"; "" when
// unspecified.
func (u QuotaUnit) Symbol() string {
	if !u.Valid() {
		return u.String()
	}
	return quotaSymbols[u]
}

// Valid reports whether u is one of the declared values (Unspecified included).
func (u QuotaUnit) Valid() bool { return u >= 0 && int(u) < len(quotaUnits.names) }

// ParseQuotaUnit reads a quota unit ("co2e-t", "QUOTA_UNIT_CO2E_TONNES", "CO2-eq t"); empty
// text gives QuotaUnitUnspecified.
func ParseQuotaUnit(s string) (QuotaUnit, error) {
	i, err := quotaUnits.parse(s)
	return QuotaUnit(i), err
}

// QuotaUnits lists the specified quota units.
func QuotaUnits() []QuotaUnit { return values[QuotaUnit](quotaUnits) }

// Scan implements sql.Scanner.
func (u *QuotaUnit) Scan(src any) error {
	i, err := quotaUnits.scan(src)
	*u = QuotaUnit(i)
	return err
}

// Value implements driver.Valuer.
func (u QuotaUnit) Value() (driver.Value, error) { return quotaUnits.value(int(u), "unit") }

// MarshalText implements encoding.TextMarshaler with the text form (JSON, the audit log).
func (t PartyType) MarshalText() ([]byte, error) {
	x, err := partyTypes.value(int(t), "party-type")
	if err != nil {
		return nil, err
	}
	return []byte(x.(string)), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParsePartyType.
func (t *PartyType) UnmarshalText(b []byte) error {
	i, err := partyTypes.parse(string(b))
	*t = PartyType(i)
	return err
}

// MarshalText implements encoding.TextMarshaler with the text form (JSON, the audit log).
func (g HFCGroup) MarshalText() ([]byte, error) {
	x, err := hfcGroups.value(int(g), "hfc-group")
	if err != nil {
		return nil, err
	}
	return []byte(x.(string)), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParseHFCGroup.
func (g *HFCGroup) UnmarshalText(b []byte) error {
	i, err := hfcGroups.parse(string(b))
	*g = HFCGroup(i)
	return err
}

// MarshalText implements encoding.TextMarshaler with the text form (JSON, the audit log).
func (d Direction) MarshalText() ([]byte, error) {
	x, err := directions.value(int(d), "direction")
	if err != nil {
		return nil, err
	}
	return []byte(x.(string)), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParseDirection.
func (d *Direction) UnmarshalText(b []byte) error {
	i, err := directions.parse(string(b))
	*d = Direction(i)
	return err
}

// MarshalText implements encoding.TextMarshaler with the text form (JSON, the audit log).
func (p Purpose) MarshalText() ([]byte, error) {
	x, err := purposes.value(int(p), "purpose")
	if err != nil {
		return nil, err
	}
	return []byte(x.(string)), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParsePurpose.
func (p *Purpose) UnmarshalText(b []byte) error {
	i, err := purposes.parse(string(b))
	*p = Purpose(i)
	return err
}

// MarshalText implements encoding.TextMarshaler with the text form (JSON, the audit log).
func (c Condition) MarshalText() ([]byte, error) {
	x, err := conditions.value(int(c), "condition")
	if err != nil {
		return nil, err
	}
	return []byte(x.(string)), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParseCondition.
func (c *Condition) UnmarshalText(b []byte) error {
	i, err := conditions.parse(string(b))
	*c = Condition(i)
	return err
}

// MarshalText implements encoding.TextMarshaler with the text form (JSON, the audit log).
func (s LicenceStatus) MarshalText() ([]byte, error) {
	x, err := licenceStatuses.value(int(s), "status")
	if err != nil {
		return nil, err
	}
	return []byte(x.(string)), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParseLicenceStatus.
func (s *LicenceStatus) UnmarshalText(b []byte) error {
	i, err := licenceStatuses.parse(string(b))
	*s = LicenceStatus(i)
	return err
}

// MarshalText implements encoding.TextMarshaler with the text form (JSON, the audit log).
func (u QuotaUnit) MarshalText() ([]byte, error) {
	x, err := quotaUnits.value(int(u), "unit")
	if err != nil {
		return nil, err
	}
	return []byte(x.(string)), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParseQuotaUnit.
func (u *QuotaUnit) UnmarshalText(b []byte) error {
	i, err := quotaUnits.parse(string(b))
	*u = QuotaUnit(i)
	return err
}
