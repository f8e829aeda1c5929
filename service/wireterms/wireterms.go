// Package wireterms maps the wire enums of halovet.v1 to the register's own vocabulary
// (package terms) and back. It is the one place where the two meet: service decodes requests
// and encodes responses with it, and the command line and the console, which speak the wire
// API, use it to print and read the same words. A wire enum value is never converted by its
// number.
//
// Every mapping is a table of pairs; TestEveryWireValueMaps walks the enum descriptors, so a
// value added to a .proto file fails the test until it has its pair here.
package wireterms

import (
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/terms"
)

type pair[W, D comparable] struct {
	wire   W
	domain D
}

// table is one enum's pairs, indexed both ways.
type table[W, D comparable] struct {
	toDomain map[W]D
	toWire   map[D]W
}

func newTable[W, D comparable](pairs ...pair[W, D]) table[W, D] {
	t := table[W, D]{toDomain: make(map[W]D, len(pairs)), toWire: make(map[D]W, len(pairs))}
	for _, p := range pairs {
		if _, dup := t.toDomain[p.wire]; dup {
			panic("wireterms: wire value paired twice")
		}
		if _, dup := t.toWire[p.domain]; dup {
			panic("wireterms: domain value paired twice")
		}
		t.toDomain[p.wire], t.toWire[p.domain] = p.domain, p.wire
	}
	return t
}

type directionPair = pair[halovetv1.Direction, terms.Direction]

var directions = newTable(
	directionPair{halovetv1.Direction_DIRECTION_UNSPECIFIED, terms.DirectionUnspecified},
	directionPair{halovetv1.Direction_DIRECTION_IMPORT, terms.DirectionImport},
	directionPair{halovetv1.Direction_DIRECTION_EXPORT, terms.DirectionExport},
	directionPair{halovetv1.Direction_DIRECTION_RE_EXPORT, terms.DirectionReExport},
	directionPair{halovetv1.Direction_DIRECTION_TRANSIT, terms.DirectionTransit},
)

type purposePair = pair[halovetv1.Purpose, terms.Purpose]

var purposes = newTable(
	purposePair{halovetv1.Purpose_PURPOSE_UNSPECIFIED, terms.PurposeUnspecified},
	purposePair{halovetv1.Purpose_PURPOSE_SERVICING, terms.PurposeServicing},
	purposePair{halovetv1.Purpose_PURPOSE_MANUFACTURING, terms.PurposeManufacturing},
	purposePair{halovetv1.Purpose_PURPOSE_FEEDSTOCK, terms.PurposeFeedstock},
	purposePair{halovetv1.Purpose_PURPOSE_PROCESS_AGENT, terms.PurposeProcessAgent},
	purposePair{halovetv1.Purpose_PURPOSE_QPS, terms.PurposeQPS},
	purposePair{halovetv1.Purpose_PURPOSE_LABORATORY, terms.PurposeLaboratory},
	purposePair{halovetv1.Purpose_PURPOSE_DESTRUCTION, terms.PurposeDestruction},
	purposePair{halovetv1.Purpose_PURPOSE_ESSENTIAL_USE, terms.PurposeEssentialUse},
	purposePair{halovetv1.Purpose_PURPOSE_CRITICAL_USE, terms.PurposeCriticalUse},
	purposePair{halovetv1.Purpose_PURPOSE_OTHER, terms.PurposeOther},
	purposePair{halovetv1.Purpose_PURPOSE_FIRE_PROTECTION_SERVICING, terms.PurposeFireProtectionServicing},
	purposePair{halovetv1.Purpose_PURPOSE_ROCKET_ENGINE_SOLVENT, terms.PurposeRocketEngineSolvent},
	purposePair{halovetv1.Purpose_PURPOSE_MEDICAL_AEROSOL_BURNS, terms.PurposeMedicalAerosolBurns},
)

type conditionPair = pair[halovetv1.Condition, terms.Condition]

var conditions = newTable(
	conditionPair{halovetv1.Condition_CONDITION_UNSPECIFIED, terms.ConditionUnspecified},
	conditionPair{halovetv1.Condition_CONDITION_VIRGIN, terms.ConditionVirgin},
	conditionPair{halovetv1.Condition_CONDITION_USED, terms.ConditionUsed},
	conditionPair{halovetv1.Condition_CONDITION_RECYCLED, terms.ConditionRecycled},
	conditionPair{halovetv1.Condition_CONDITION_RECLAIMED, terms.ConditionReclaimed},
)

type partyTypePair = pair[halovetv1.PartyType, terms.PartyType]

var partyTypes = newTable(
	partyTypePair{halovetv1.PartyType_PARTY_TYPE_UNSPECIFIED, terms.PartyTypeUnspecified},
	partyTypePair{halovetv1.PartyType_PARTY_TYPE_ARTICLE_5, terms.PartyTypeArticle5},
	partyTypePair{halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5, terms.PartyTypeNonArticle5},
	partyTypePair{halovetv1.PartyType_PARTY_TYPE_NON_PARTY, terms.PartyTypeNonParty},
)

type hfcGroupPair = pair[halovetv1.HfcGroup, terms.HFCGroup]

var hfcGroups = newTable(
	hfcGroupPair{halovetv1.HfcGroup_HFC_GROUP_UNSPECIFIED, terms.HFCGroupUnspecified},
	hfcGroupPair{halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1, terms.HFCGroupA5Group1},
	hfcGroupPair{halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_2, terms.HFCGroupA5Group2},
	hfcGroupPair{halovetv1.HfcGroup_HFC_GROUP_NON_A5, terms.HFCGroupNonA5},
	hfcGroupPair{halovetv1.HfcGroup_HFC_GROUP_NON_A5_VARIANT, terms.HFCGroupNonA5Variant},
)

type statusPair = pair[halovetv1.LicenceStatus, terms.LicenceStatus]

var licenceStatuses = newTable(
	statusPair{halovetv1.LicenceStatus_LICENCE_STATUS_UNSPECIFIED, terms.LicenceStatusUnspecified},
	statusPair{halovetv1.LicenceStatus_LICENCE_STATUS_DRAFT, terms.LicenceDraft},
	statusPair{halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE, terms.LicenceActive},
	statusPair{halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED, terms.LicenceSuspended},
	statusPair{halovetv1.LicenceStatus_LICENCE_STATUS_REVOKED, terms.LicenceRevoked},
)

type unitPair = pair[halovetv1.QuotaUnit, terms.QuotaUnit]

var quotaUnits = newTable(
	unitPair{halovetv1.QuotaUnit_QUOTA_UNIT_UNSPECIFIED, terms.QuotaUnitUnspecified},
	unitPair{halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES, terms.QuotaMetricTonnes},
	unitPair{halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES, terms.QuotaODPTonnes},
	unitPair{halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES, terms.QuotaCO2eTonnes},
)

// The FromWire functions return false for a number the wire enum does not declare (a newer
// or a careless client); the ToWire functions give the UNSPECIFIED value for a domain value
// outside the declared ones.

// DirectionFromWire gives the direction of a wire value.
func DirectionFromWire(w halovetv1.Direction) (terms.Direction, bool) {
	d, ok := directions.toDomain[w]
	return d, ok
}

// DirectionToWire gives the wire value of a direction.
func DirectionToWire(d terms.Direction) halovetv1.Direction { return directions.toWire[d] }

// PurposeFromWire gives the purpose of a wire value.
func PurposeFromWire(w halovetv1.Purpose) (terms.Purpose, bool) {
	d, ok := purposes.toDomain[w]
	return d, ok
}

// PurposeToWire gives the wire value of a purpose.
func PurposeToWire(d terms.Purpose) halovetv1.Purpose { return purposes.toWire[d] }

// ConditionFromWire gives the condition of a wire value.
func ConditionFromWire(w halovetv1.Condition) (terms.Condition, bool) {
	d, ok := conditions.toDomain[w]
	return d, ok
}

// ConditionToWire gives the wire value of a condition.
func ConditionToWire(d terms.Condition) halovetv1.Condition { return conditions.toWire[d] }

// PartyTypeFromWire gives the Party type of a wire value.
func PartyTypeFromWire(w halovetv1.PartyType) (terms.PartyType, bool) {
	d, ok := partyTypes.toDomain[w]
	return d, ok
}

// PartyTypeToWire gives the wire value of a Party type.
func PartyTypeToWire(d terms.PartyType) halovetv1.PartyType { return partyTypes.toWire[d] }

// HFCGroupFromWire gives the HFC group of a wire value.
func HFCGroupFromWire(w halovetv1.HfcGroup) (terms.HFCGroup, bool) {
	d, ok := hfcGroups.toDomain[w]
	return d, ok
}

// HFCGroupToWire gives the wire value of an HFC group.
func HFCGroupToWire(d terms.HFCGroup) halovetv1.HfcGroup { return hfcGroups.toWire[d] }

// LicenceStatusFromWire gives the licence status of a wire value.
func LicenceStatusFromWire(w halovetv1.LicenceStatus) (terms.LicenceStatus, bool) {
	d, ok := licenceStatuses.toDomain[w]
	return d, ok
}

// LicenceStatusToWire gives the wire value of a licence status.
func LicenceStatusToWire(d terms.LicenceStatus) halovetv1.LicenceStatus {
	return licenceStatuses.toWire[d]
}

// QuotaUnitFromWire gives the quota unit of a wire value.
func QuotaUnitFromWire(w halovetv1.QuotaUnit) (terms.QuotaUnit, bool) {
	d, ok := quotaUnits.toDomain[w]
	return d, ok
}

// QuotaUnitToWire gives the wire value of a quota unit.
func QuotaUnitToWire(d terms.QuotaUnit) halovetv1.QuotaUnit { return quotaUnits.toWire[d] }
