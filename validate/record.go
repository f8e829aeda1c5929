package validate

import (
	"errors"
	"fmt"
	"strings"
)

// Record is one declared shipment as a customs or ERP system sends it. It mirrors the wire
// message halovet.v1.ShipmentRecord field for field; text fields hold what the paper says and
// are parsed by Check, which reports what it cannot read as findings.
type Record struct {
	Key             string          // the client's own key, unique per company, unchanged on retry
	Line            int64           // line in the source file (1 = first line), 0 when not from a file
	Direction       Direction       // import, export, re-export or transit
	CompanyID       string          // registered identifier of the declaring company
	LicenceNumber   string          // licence the shipment draws on
	PartnerCountry  string          // ISO 3166-1 alpha-2 (the exporting country for an import)
	DeclarationDate string          // as declared; ISO 8601 "YYYY-MM-DD" is accepted
	Substance       string          // substance or blend as declared: any identifier the resolver takes
	HSCode          string          // declared HS code, 6 digits or more, dots optional
	CAS             string          // declared CAS Registry Number
	Formula         string          // declared formula
	TotalQuantity   string          // total net mass in Unit, as declared: a decimal number with a dot ("1250.5"); may be empty when FillPerPackage and PackageCount are given
	Unit            string          // unit of TotalQuantity and FillPerPackage: "kg", "t", "g" or "lb"
	PackageCount    int64           // number of packages (cylinders, drums, ISO tanks); 0 when not declared
	FillPerPackage  string          // net fill of each package in Unit, as declared; "" when not declared
	Purpose         Purpose         // declared purpose
	Condition       Condition       // declared condition; unspecified counts as virgin
	Composition     []DeclaredShare // declared composition of a mixture, when the paper gives one
	// Measured is the composition an analyser or a laboratory measured in the cylinder,
	// when the shipment was tested; Check compares it with the declaration. It is the wire
	// field measured_composition and the batch-file column of that name (ParseMeasured reads
	// the text form).
	Measured []MeasuredShare
	// Unreadable lists fields a reader found but could not convert to their type (an unknown
	// direction word, a container count that is not a whole number, ...). Check turns each
	// into a FIELD_UNREADABLE error, so the rest of the record is still checked.
	Unreadable []FieldIssue
}

// DeclaredShare is one component of a declared composition.
type DeclaredShare struct {
	Identifier string  // any identifier that resolves to exactly one substance
	MassPct    float64 // mass percent of the mixture
}

// FieldIssue is a field a reader could not convert.
type FieldIssue struct {
	Field  string // field (column) name, e.g. "direction"
	Text   string // the text as found, cut to 80 bytes
	Reason string // what is wrong and what is accepted
}

// ErrUnknownValue is wrapped by the Parse functions of the enumerations when the text is not
// one of the accepted words.
var ErrUnknownValue = errors.New("unknown value")

// enumKey reduces s to lower-case letters and digits, dropping hyphens, underscores and
// spaces, so that "Re-Export", "re_export" and "RE EXPORT" all give "reexport". It returns ""
// when s holds any other character or is longer than the buffer. It does not allocate for
// inputs it rejects or when s is already reduced.
func enumKey(s string) string {
	var buf [48]byte
	n := 0
	changed := false
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= 'a' && c <= 'z', c >= '0' && c <= '9':
		case c >= 'A' && c <= 'Z':
			c += 'a' - 'A'
			changed = true
		case c == '-' || c == '_' || c == ' ' || c == '\t':
			changed = true
			continue
		default:
			return ""
		}
		if n == len(buf) {
			return ""
		}
		buf[n] = c
		n++
	}
	if !changed {
		return s
	}
	return string(buf[:n])
}

// cutText shortens s for use in a message.
func cutText(s string) string {
	const max = 80
	if len(s) <= max {
		return s
	}
	// Do not split a UTF-8 sequence.
	i := max
	for i > 0 && s[i]&0xC0 == 0x80 {
		i--
	}
	return s[:i] + "…"
}

// Direction of a shipment as seen from the reporting Party.
type Direction int

// Directions. The numbers equal the wire enum halovet.v1.Direction.
const (
	DirectionUnspecified Direction = iota
	DirectionImport
	DirectionExport
	DirectionReExport
	DirectionTransit
)

var directionNames = [...]string{"", "import", "export", "re-export", "transit"}

// String returns the lower-case word used in files ("re-export"), or "" when unspecified.
func (d Direction) String() string {
	if d < 0 || int(d) >= len(directionNames) {
		return fmt.Sprintf("direction(%d)", int(d))
	}
	return directionNames[d]
}

// Outgoing reports whether the goods leave the reporting Party (export or re-export).
func (d Direction) Outgoing() bool { return d == DirectionExport || d == DirectionReExport }

// ParseDirection reads a direction case-insensitively, tolerating hyphens, underscores and
// spaces ("Re-Export", "RE_EXPORT") and the wire names ("DIRECTION_IMPORT"). Empty text gives
// DirectionUnspecified and no error.
func ParseDirection(s string) (Direction, error) {
	k := strings.TrimPrefix(enumKey(s), "direction")
	switch k {
	case "":
		if strings.TrimSpace(s) == "" {
			return DirectionUnspecified, nil
		}
	case "unspecified":
		return DirectionUnspecified, nil
	case "import", "imp", "in":
		return DirectionImport, nil
	case "export", "exp", "out":
		return DirectionExport, nil
	case "reexport":
		return DirectionReExport, nil
	case "transit":
		return DirectionTransit, nil
	}
	return DirectionUnspecified, fmt.Errorf("%w: direction %q; accepted: import, export, re-export, transit", ErrUnknownValue, cutText(s))
}

// Purpose declared for the substance.
type Purpose int

// Purposes. The numbers equal the wire enum halovet.v1.Purpose.
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

	purposeMax = PurposeMedicalAerosolBurns
)

var purposeNames = [...]string{"", "servicing", "manufacturing", "feedstock", "process-agent", "qps",
	"laboratory", "destruction", "essential-use", "critical-use", "other",
	"fire-protection-servicing", "rocket-engine-solvent", "medical-aerosol-burns"}

// String returns the lower-case word used in files ("process-agent"), or "" when unspecified.
func (p Purpose) String() string {
	if p < 0 || int(p) >= len(purposeNames) {
		return fmt.Sprintf("purpose(%d)", int(p))
	}
	return purposeNames[p]
}

// ParsePurpose reads a purpose case-insensitively, tolerating hyphens, underscores and spaces
// and the wire names ("PURPOSE_QPS"). Empty text gives PurposeUnspecified and no error.
func ParsePurpose(s string) (Purpose, error) {
	k := strings.TrimPrefix(enumKey(s), "purpose")
	switch k {
	case "":
		if strings.TrimSpace(s) == "" {
			return PurposeUnspecified, nil
		}
	case "unspecified":
		return PurposeUnspecified, nil
	case "servicing", "service":
		return PurposeServicing, nil
	case "manufacturing", "manufacture":
		return PurposeManufacturing, nil
	case "feedstock":
		return PurposeFeedstock, nil
	case "processagent":
		return PurposeProcessAgent, nil
	case "qps", "quarantineandpreshipment", "quarantinepreshipment":
		return PurposeQPS, nil
	case "laboratory", "lab", "laboratoryandanalytical", "analytical":
		return PurposeLaboratory, nil
	case "destruction":
		return PurposeDestruction, nil
	case "essentialuse", "essential":
		return PurposeEssentialUse, nil
	case "criticaluse", "critical":
		return PurposeCriticalUse, nil
	case "other":
		return PurposeOther, nil
	case "fireprotectionservicing", "fireprotection", "firesuppression":
		return PurposeFireProtectionServicing, nil
	case "rocketenginesolvent", "rocketengine":
		return PurposeRocketEngineSolvent, nil
	case "medicalaerosolburns", "medicalaerosol":
		return PurposeMedicalAerosolBurns, nil
	}
	return PurposeUnspecified, fmt.Errorf("%w: purpose %q; accepted: servicing, manufacturing, feedstock, process-agent, qps, laboratory, destruction, essential-use, critical-use, other, fire-protection-servicing, rocket-engine-solvent, medical-aerosol-burns", ErrUnknownValue, cutText(s))
}

// Condition of the substance.
type Condition int

// Conditions. The numbers equal the wire enum halovet.v1.Condition.
const (
	ConditionUnspecified Condition = iota
	ConditionVirgin
	ConditionUsed
	ConditionRecycled
	ConditionReclaimed
)

var conditionNames = [...]string{"", "virgin", "used", "recycled", "reclaimed"}

// String returns the lower-case word used in files, or "" when unspecified.
func (c Condition) String() string {
	if c < 0 || int(c) >= len(conditionNames) {
		return fmt.Sprintf("condition(%d)", int(c))
	}
	return conditionNames[c]
}

// Recovered reports whether the material is used, recycled or reclaimed.
func (c Condition) Recovered() bool {
	return c == ConditionUsed || c == ConditionRecycled || c == ConditionReclaimed
}

// ParseCondition reads a condition case-insensitively, tolerating hyphens, underscores and
// spaces and the wire names ("CONDITION_USED"). Empty text gives ConditionUnspecified.
func ParseCondition(s string) (Condition, error) {
	k := strings.TrimPrefix(enumKey(s), "condition")
	switch k {
	case "":
		if strings.TrimSpace(s) == "" {
			return ConditionUnspecified, nil
		}
	case "unspecified":
		return ConditionUnspecified, nil
	case "virgin", "new":
		return ConditionVirgin, nil
	case "used", "recovered":
		return ConditionUsed, nil
	case "recycled":
		return ConditionRecycled, nil
	case "reclaimed":
		return ConditionReclaimed, nil
	}
	return ConditionUnspecified, fmt.Errorf("%w: condition %q; accepted: virgin, used, recycled, reclaimed", ErrUnknownValue, cutText(s))
}
