// Package wireterms maps the wire enums of halovet.v1 to the register's own vocabulary
// (package terms; the catalogue's GWP sets, GWP conventions, HS editions and blend types of
// package substances; the roles of package access) and back. It is the one place where the two meet: service decodes requests
// and encodes responses with it, and the command line and the console, which speak the wire
// API, use it to print and read the same words. A wire enum value is never converted by its
// number.
//
// Every mapping is a table of pairs; TestEveryWireValueMaps walks the enum descriptors, so a
// value added to a .proto file fails the test until it has its pair here.
package wireterms

import (
	"github.com/halovet/halovet/access"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/substances"
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

type gwpSetPair = pair[halovetv1.GwpSet, substances.GWPSet]

var gwpSets = newTable(
	gwpSetPair{halovetv1.GwpSet_GWP_SET_UNSPECIFIED, ""},
	gwpSetPair{halovetv1.GwpSet_GWP_SET_PROTOCOL_ANNEXES, substances.SetProtocol},
	gwpSetPair{halovetv1.GwpSet_GWP_SET_IPCC_AR4, substances.SetAR4},
	gwpSetPair{halovetv1.GwpSet_GWP_SET_IPCC_AR5, substances.SetAR5},
	gwpSetPair{halovetv1.GwpSet_GWP_SET_IPCC_AR6, substances.SetAR6},
)

type conventionPair = pair[halovetv1.GwpConvention, substances.GWPConvention]

var gwpConventions = newTable(
	conventionPair{halovetv1.GwpConvention_GWP_CONVENTION_UNSPECIFIED, ""},
	conventionPair{halovetv1.GwpConvention_GWP_CONVENTION_ALL_COMPONENTS, substances.ConventionAllComponents},
	conventionPair{halovetv1.GwpConvention_GWP_CONVENTION_ANNEX_F_ONLY, substances.ConventionAnnexFOnly},
)

type hsEditionPair = pair[halovetv1.HsEdition, substances.HSEdition]

var hsEditions = newTable(
	hsEditionPair{halovetv1.HsEdition_HS_EDITION_UNSPECIFIED, ""},
	hsEditionPair{halovetv1.HsEdition_HS_EDITION_HS_2017, substances.HS2017},
	hsEditionPair{halovetv1.HsEdition_HS_EDITION_HS_2022, substances.HS2022},
)

type blendTypePair = pair[halovetv1.BlendType, substances.BlendType]

var blendTypes = newTable(
	blendTypePair{halovetv1.BlendType_BLEND_TYPE_UNSPECIFIED, ""},
	blendTypePair{halovetv1.BlendType_BLEND_TYPE_ZEOTROPE, substances.BlendZeotrope},
	blendTypePair{halovetv1.BlendType_BLEND_TYPE_AZEOTROPE, substances.BlendAzeotrope},
	blendTypePair{halovetv1.BlendType_BLEND_TYPE_MIXTURE, substances.BlendMixture},
)

type rolePair = pair[halovetv1.Role, access.Role]

var roles = newTable(
	rolePair{halovetv1.Role_ROLE_UNSPECIFIED, access.RoleAnonymous},
	rolePair{halovetv1.Role_ROLE_OFFICER, access.RoleOfficer},
	rolePair{halovetv1.Role_ROLE_CUSTOMS, access.RoleCustoms},
	rolePair{halovetv1.Role_ROLE_TRADER, access.RoleTrader},
	rolePair{halovetv1.Role_ROLE_AUDITOR, access.RoleAuditor},
	rolePair{halovetv1.Role_ROLE_READER, access.RoleReader},
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

// GWPSetFromWire gives the GWP set of a wire value ("" for unspecified).
func GWPSetFromWire(w halovetv1.GwpSet) (substances.GWPSet, bool) {
	d, ok := gwpSets.toDomain[w]
	return d, ok
}

// GWPSetToWire gives the wire value of a GWP set.
func GWPSetToWire(d substances.GWPSet) halovetv1.GwpSet { return gwpSets.toWire[d] }

// GWPConventionFromWire gives the mixture GWP convention of a wire value.
func GWPConventionFromWire(w halovetv1.GwpConvention) (substances.GWPConvention, bool) {
	d, ok := gwpConventions.toDomain[w]
	return d, ok
}

// GWPConventionToWire gives the wire value of a mixture GWP convention.
func GWPConventionToWire(d substances.GWPConvention) halovetv1.GwpConvention {
	return gwpConventions.toWire[d]
}

// HSEditionFromWire gives the HS edition of a wire value.
func HSEditionFromWire(w halovetv1.HsEdition) (substances.HSEdition, bool) {
	d, ok := hsEditions.toDomain[w]
	return d, ok
}

// HSEditionToWire gives the wire value of an HS edition.
func HSEditionToWire(d substances.HSEdition) halovetv1.HsEdition { return hsEditions.toWire[d] }

// BlendTypeFromWire gives the blend type of a wire value.
func BlendTypeFromWire(w halovetv1.BlendType) (substances.BlendType, bool) {
	d, ok := blendTypes.toDomain[w]
	return d, ok
}

// BlendTypeToWire gives the wire value of a blend type.
func BlendTypeToWire(d substances.BlendType) halovetv1.BlendType { return blendTypes.toWire[d] }

// RoleFromWire gives the role of a wire value (access.RoleAnonymous for unspecified).
func RoleFromWire(w halovetv1.Role) (access.Role, bool) {
	d, ok := roles.toDomain[w]
	return d, ok
}

// RoleToWire gives the wire value of a role.
func RoleToWire(d access.Role) halovetv1.Role { return roles.toWire[d] }

// The Word functions give the word a person reads for a wire value, the domain's own: "MP",
// "AR4" ... for a GWP set, "all-components" or "annex-f-only" for a convention, "HS2022" for
// an HS edition, "zeotrope" for a blend type, "officer" for a role; "" for the unspecified
// value, and the enum's Go name for a number no .proto declares.

// GWPSetWord gives the word of a GWP set.
func GWPSetWord(w halovetv1.GwpSet) string { return word(gwpSets, w) }

// GWPConventionWord gives the word of a mixture GWP convention.
func GWPConventionWord(w halovetv1.GwpConvention) string { return word(gwpConventions, w) }

// HSEditionWord gives the word of an HS edition.
func HSEditionWord(w halovetv1.HsEdition) string { return word(hsEditions, w) }

// BlendTypeWord gives the word of a blend type.
func BlendTypeWord(w halovetv1.BlendType) string { return word(blendTypes, w) }

// RoleWord gives the word of a role.
func RoleWord(w halovetv1.Role) string { return word(roles, w) }

func word[W interface {
	comparable
	String() string
}, D ~string](t table[W, D], w W) string {
	if d, ok := t.toDomain[w]; ok {
		return string(d)
	}
	return w.String()
}
