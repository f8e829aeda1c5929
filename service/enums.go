package service

import (
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Text forms of the API's enums as stored in the database.

var directionText = map[halovetv1.Direction]string{
	halovetv1.Direction_DIRECTION_IMPORT:    "import",
	halovetv1.Direction_DIRECTION_EXPORT:    "export",
	halovetv1.Direction_DIRECTION_RE_EXPORT: "re-export",
	halovetv1.Direction_DIRECTION_TRANSIT:   "transit",
}

var purposeText = map[halovetv1.Purpose]string{
	halovetv1.Purpose_PURPOSE_SERVICING:     "servicing",
	halovetv1.Purpose_PURPOSE_MANUFACTURING: "manufacturing",
	halovetv1.Purpose_PURPOSE_FEEDSTOCK:     "feedstock",
	halovetv1.Purpose_PURPOSE_PROCESS_AGENT: "process-agent",
	halovetv1.Purpose_PURPOSE_QPS:           "qps",
	halovetv1.Purpose_PURPOSE_LABORATORY:    "laboratory",
	halovetv1.Purpose_PURPOSE_DESTRUCTION:   "destruction",
	halovetv1.Purpose_PURPOSE_ESSENTIAL_USE: "essential-use",
	halovetv1.Purpose_PURPOSE_CRITICAL_USE:  "critical-use",
	halovetv1.Purpose_PURPOSE_OTHER:         "other",

	halovetv1.Purpose_PURPOSE_FIRE_PROTECTION_SERVICING: "fire-protection-servicing",
	halovetv1.Purpose_PURPOSE_ROCKET_ENGINE_SOLVENT:     "rocket-engine-solvent",
	halovetv1.Purpose_PURPOSE_MEDICAL_AEROSOL_BURNS:     "medical-aerosol-burns",
}

var partyTypeText = map[halovetv1.PartyType]string{
	halovetv1.PartyType_PARTY_TYPE_ARTICLE_5:     "article-5",
	halovetv1.PartyType_PARTY_TYPE_NON_ARTICLE_5: "non-article-5",
	halovetv1.PartyType_PARTY_TYPE_NON_PARTY:     "non-party",
}

var hfcGroupText = map[halovetv1.HfcGroup]string{
	halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_1:     "a5-group-1",
	halovetv1.HfcGroup_HFC_GROUP_A5_GROUP_2:     "a5-group-2",
	halovetv1.HfcGroup_HFC_GROUP_NON_A5:         "non-a5",
	halovetv1.HfcGroup_HFC_GROUP_NON_A5_VARIANT: "non-a5-variant",
}

var quotaUnitText = map[halovetv1.QuotaUnit]string{
	halovetv1.QuotaUnit_QUOTA_UNIT_METRIC_TONNES: "metric-t",
	halovetv1.QuotaUnit_QUOTA_UNIT_ODP_TONNES:    "odp-t",
	halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES:   "co2e-t",
}

var licenceStatusText = map[halovetv1.LicenceStatus]string{
	halovetv1.LicenceStatus_LICENCE_STATUS_DRAFT:     "draft",
	halovetv1.LicenceStatus_LICENCE_STATUS_ACTIVE:    "active",
	halovetv1.LicenceStatus_LICENCE_STATUS_SUSPENDED: "suspended",
	halovetv1.LicenceStatus_LICENCE_STATUS_REVOKED:   "revoked",
}

// invert builds the text -> enum map of an enum -> text map.
func invert[E comparable](m map[E]string) map[string]E {
	out := make(map[string]E, len(m))
	for k, v := range m {
		out[v] = k
	}
	return out
}

var (
	directionEnum     = invert(directionText)
	purposeEnum       = invert(purposeText)
	partyTypeEnum     = invert(partyTypeText)
	hfcGroupEnum      = invert(hfcGroupText)
	quotaUnitEnum     = invert(quotaUnitText)
	licenceStatusEnum = invert(licenceStatusText)
)
