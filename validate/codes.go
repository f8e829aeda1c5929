package validate

import (
	"fmt"
	"io"
	"strings"
)

// Finding codes. They are halovet's own names, stable across releases: a client may match on
// them. CodeTable documents each.
const (
	// record
	CodeLineUnreadable   = "LINE_UNREADABLE"
	CodeKeyMissing       = "KEY_MISSING"
	CodeKeyInvalid       = "KEY_INVALID"
	CodeFieldUnreadable  = "FIELD_UNREADABLE"
	CodeDirectionMissing = "DIRECTION_MISSING"
	CodeCompanyMissing   = "COMPANY_MISSING"
	CodeFieldTextInvalid = "FIELD_TEXT_INVALID"
	CodeFieldTooLong     = "FIELD_TOO_LONG"
	CodeFindingsCapped   = "FINDINGS_CAPPED"

	// identity
	CodeSubstMissing       = "SUBST_MISSING"
	CodeSubstUnknown       = "SUBST_UNKNOWN"
	CodeSubstAmbiguous     = "SUBST_AMBIGUOUS"
	CodeSubstLooseMatch    = "SUBST_LOOSE_MATCH"
	CodeSubstNotControlled = "SUBST_NOT_CONTROLLED"
	CodeCASFormat          = "CAS_FORMAT"
	CodeCASCheckDigit      = "CAS_CHECK_DIGIT"
	CodeCASMismatch        = "CAS_MISMATCH"
	CodeCASNotApplicable   = "CAS_NOT_APPLICABLE"
	CodeCASUnverified      = "CAS_UNVERIFIED"
	CodeHSFormat           = "HS_FORMAT"
	CodeHSMismatch         = "HS_MISMATCH"
	CodeHSShared           = "HS_SHARED"
	CodeHSEdition          = "HS_EDITION"
	CodeHSMixtureUnknown   = "HS_MIXTURE_UNKNOWN"
	CodeHSKind             = "HS_KIND"
	CodeFormulaFormat      = "FORMULA_FORMAT"
	CodeFormulaMismatch    = "FORMULA_MISMATCH"
	CodeFormulaNotApplic   = "FORMULA_NOT_APPLICABLE"

	// quantity
	CodeQtyMissing           = "QTY_MISSING"
	CodeQtyFormat            = "QTY_FORMAT"
	CodeQtyNotPositive       = "QTY_NOT_POSITIVE"
	CodeQtyTooLarge          = "QTY_TOO_LARGE"
	CodeQtyUnitUnknown       = "QTY_UNIT_UNKNOWN"
	CodeQtyPackagesInvalid   = "QTY_PACKAGES_INVALID"
	CodeQtyFillNoPackages    = "QTY_FILL_WITHOUT_PACKAGES"
	CodeQtyTotalFillDisagree = "QTY_TOTAL_FILL_DISAGREE"

	// exempted uses and servicing tails (family phase-out)
	CodeExemptUseWrongGroup   = "EXEMPT_USE_WRONG_GROUP"
	CodeExemptUseUnauthorised = "EXEMPT_USE_UNAUTHORISED"
	CodeHCFCTailUse           = "HCFC_TAIL_USE"
	CodeHCFCTailUseMissing    = "HCFC_TAIL_PURPOSE_MISSING"
	CodeQtyFillLarge          = "QTY_FILL_LARGE"
	CodeQtyFillSmall          = "QTY_FILL_SMALL"
	CodeQtyTooSmall           = "QTY_TOO_SMALL"

	// party
	CodePartnerMissing  = "PARTNER_MISSING"
	CodePartnerFormat   = "PARTNER_FORMAT"
	CodePartnerUnknown  = "PARTNER_UNKNOWN"
	CodePartnerSelf     = "PARTNER_SELF"
	CodePartnerNonParty = "PARTNER_NON_PARTY"
	CodePartnerNotBound = "PARTNER_NOT_BOUND"

	// dates
	CodeDateMissing        = "DATE_MISSING"
	CodeDateFormat         = "DATE_FORMAT"
	CodeDateFuture         = "DATE_FUTURE"
	CodeLicenceNotYetValid = "LICENCE_NOT_YET_VALID"
	CodeLicenceExpired     = "LICENCE_EXPIRED"
	CodeYearClosed         = "YEAR_CLOSED"

	// licence
	CodeLicenceMissing   = "LICENCE_MISSING"
	CodeLicenceUnknown   = "LICENCE_UNKNOWN"
	CodeLicenceCompany   = "LICENCE_COMPANY"
	CodeLicenceDirection = "LICENCE_DIRECTION"
	CodeLicenceInactive  = "LICENCE_INACTIVE"
	CodeLicenceScope     = "LICENCE_SCOPE"
	CodeLicenceChanged   = "LICENCE_CHANGED"

	// quota
	CodeQuotaExceeded    = "QUOTA_EXCEEDED"
	CodeQuotaNearLimit   = "QUOTA_NEAR_LIMIT"
	CodeQuotaLineInvalid = "QUOTA_LINE_INVALID"

	// phase-out
	CodePhasedOut       = "PHASED_OUT"
	CodePhasedOutExempt = "PHASED_OUT_EXEMPT"
	CodeScheduleUnknown = "SCHEDULE_UNKNOWN"

	// purpose
	CodePurposeMissing      = "PURPOSE_MISSING"
	CodeQPSNotMB            = "QPS_NOT_MB"
	CodePurposeNotLicensed  = "PURPOSE_NOT_LICENSED"
	CodePurposeNotCounted   = "PURPOSE_NOT_COUNTED"
	CodeRecoveredNotCounted = "RECOVERED_NOT_COUNTED"
	CodeTransitNotCounted   = "TRANSIT_NOT_COUNTED"

	// mixture
	CodeMixAdHoc             = "MIX_AD_HOC"
	CodeMixComponentUnknown  = "MIX_COMPONENT_UNKNOWN"
	CodeMixShareInvalid      = "MIX_SHARE_INVALID"
	CodeMixSum               = "MIX_SUM"
	CodeMixComponentMismatch = "MIX_COMPONENT_MISMATCH"
	CodeMixOutOfTolerance    = "MIX_OUT_OF_TOLERANCE"
	CodeMixTooMany           = "MIX_TOO_MANY"

	// duplicates
	CodeDupKeyConflict = "DUP_KEY_CONFLICT"
	CodeDupReplay      = "DUP_REPLAY"

	// measurement
	CodeMeasuredUnreadable       = "MEASURED_UNREADABLE"
	CodeMeasuredContradicts      = "MEASURED_CONTRADICTS"
	CodeMeasuredHiddenControlled = "MEASURED_HIDDEN_CONTROLLED"
	CodeMeasuredNonCondensables  = "MEASURED_NON_CONDENSABLES"
	CodeMeasuredConfirms         = "MEASURED_CONFIRMS"
	CodeMeasuredNotCompared      = "MEASURED_NOT_COMPARED"
)

// CodeInfo documents one finding code.
type CodeInfo struct {
	Code     string
	Severity Severity
	Family   string // rule family: record, identity, quantity, party, dates, licence, quota, phase-out, purpose, mixture, duplicates, measurement
	Field    string // the field findings of this code usually name ("" when it varies)
	Meaning  string // when the code is given
	Accepted string // what is accepted instead, or what the notice means for the record
}

// codeTable is the single source of every code's severity and documentation.
var codeTable = []CodeInfo{
	// record
	{CodeLineUnreadable, SeverityError, "record", "", "A line of a batch file could not be read as a record (not UTF-8 text, a quoting mistake, a wrong number of fields, invalid JSON, an unknown key, a line over 1 MiB).", "One record per line in the documented CSV or JSON Lines format."},
	{CodeKeyMissing, SeverityError, "record", "record_key", "The record has no key.", "A non-empty key of at most 128 bytes, unique per company and unchanged when the record is sent again."},
	{CodeKeyInvalid, SeverityError, "record", "record_key", "The key is longer than 128 bytes or holds control, invisible or bidirectional characters, or invalid UTF-8.", "Printable text of at most 128 bytes."},
	{CodeFieldUnreadable, SeverityError, "record", "", "A reader found a field but could not convert it (an unknown direction, purpose or condition word, a package count that is not a whole number, a composition it cannot read).", "The words and formats listed in the message."},
	{CodeDirectionMissing, SeverityError, "record", "direction", "No direction is declared (an unknown direction word or number is FIELD_UNREADABLE).", "import, export, re-export or transit."},
	{CodeCompanyMissing, SeverityError, "record", "company_id", "No company is declared.", "The registered identifier of the declaring company."},
	{CodeFieldTextInvalid, SeverityError, "record", "", "A text field holds a NUL byte, invalid UTF-8, a control character, or an invisible or bidirectional character (a Unicode format character such as U+202E or U+200B, a line or paragraph separator). The record is checked no further.", "Printable UTF-8 text without control, invisible or bidirectional characters."},
	{CodeFieldTooLong, SeverityError, "record", "", "A text field is longer than its limit (company_id and licence_number 64 bytes, partner_country 16, declaration_date 32, substance and each composition identifier 256, declared_hs_code and declared_cas_number 32, declared_formula 128, total_net_quantity and net_fill_per_package 64, quantity_unit 32). The record is checked no further.", "Text within the field's limit."},
	{CodeFindingsCapped, SeverityNotice, "record", "", "The record gave more than 32 findings; the first 32 (errors first) are kept and this notice counts the rest.", "Correct the findings shown and check the record again."},

	// identity
	{CodeSubstMissing, SeverityError, "identity", "substance", "Neither a substance nor a declared composition is given.", "Any identifier the catalogue resolves (designation, R-number, chemical name, CAS number), or a declared composition."},
	{CodeSubstUnknown, SeverityError, "identity", "substance", "The declared substance matches no catalogue entry; the message lists the closest names.", "An identifier that resolves to exactly one substance or blend."},
	{CodeSubstAmbiguous, SeverityError, "identity", "substance", "The declared substance matches several catalogue entries equally well; the message lists them.", "A designation or CAS number that names one of them."},
	{CodeSubstLooseMatch, SeverityNotice, "identity", "substance", "The declared text was resolved by an approximate match, not by an exact name or number.", "Accepted; declaring the catalogue designation avoids the guess."},
	{CodeSubstNotControlled, SeverityNotice, "identity", "substance", "Nothing in the shipment is controlled by the Montreal Protocol.", "Accepted; licence, quota, partner and phase-out checks do not apply under the Protocol (national rules may still)."},
	{CodeCASFormat, SeverityError, "identity", "declared_cas_number", "The declared CAS Registry Number is not of the form digits-digits-digit.", "2 to 7 digits, a hyphen, 2 digits, a hyphen and the check digit, e.g. 75-45-6 (the same digits without hyphens are read too)."},
	{CodeCASCheckDigit, SeverityError, "identity", "declared_cas_number", "The check digit of the declared CAS Registry Number is wrong (published CAS check-digit method).", "A CAS Registry Number whose last digit equals the weighted digit sum mod 10."},
	{CodeCASMismatch, SeverityError, "identity", "declared_cas_number", "The declared CAS Registry Number belongs to another substance than the one declared, or to none in the catalogue.", "The CAS Registry Number of the declared substance."},
	{CodeCASNotApplicable, SeverityWarning, "identity", "declared_cas_number", "A CAS Registry Number is declared for a blend; blends have none of their own.", "No CAS number for a blend; components are named in the composition."},
	{CodeCASUnverified, SeverityNotice, "identity", "declared_cas_number", "The catalogue entry is a treaty isomer group without one CAS number, and the declared number matches no catalogued isomer, so it cannot be checked.", "Accepted; the number was only checked for its check digit."},
	{CodeHSFormat, SeverityError, "identity", "declared_hs_code", "The declared HS code cannot be read.", "At least 6 digits, dots and spaces optional, e.g. 2903.71 or 290371 or a national extension 2903.71.00."},
	{CodeHSMismatch, SeverityError, "identity", "declared_hs_code", "The declared HS subheading (first 6 digits) is not a subheading of the declared substance or mixture in HS 2017 or HS 2022.", "One of the subheadings listed in the message."},
	{CodeHSShared, SeverityNotice, "identity", "declared_hs_code", "The declared HS code fits, but the subheading also holds other goods, so the code alone does not prove identity.", "Accepted; the identity rests on the declared substance and CAS number."},
	{CodeHSEdition, SeverityNotice, "identity", "declared_hs_code", "The declared HS code fits only the HS edition not in force on the declaration date (HS 2022 from 2022-01-01).", "Accepted; the message gives the code of the edition in force."},
	{CodeHSMixtureUnknown, SeverityNotice, "identity", "declared_hs_code", "The HS subheading of the mixture could not be determined, so the declared code was not checked.", "Accepted; the code is left to customs."},
	{CodeHSKind, SeverityError, "identity", "declared_hs_code", "A subheading of heading 29.03 (single chemically defined substances) is declared for a mixture, or a mixture subheading (HS 2022 heading 38.27, HS 2017 3824.71-3824.79) for a single substance.", "For a mixture its subheading of heading 38.27; for a single substance its own subheading; the message names them."},
	{CodeFormulaFormat, SeverityWarning, "identity", "declared_formula", "The declared formula cannot be read.", "A molecular formula such as CHClF2 or C2H2F4."},
	{CodeFormulaMismatch, SeverityError, "identity", "declared_formula", "The declared formula holds other atoms than the declared substance's formula.", "The formula of the declared substance, in any atom order."},
	{CodeFormulaNotApplic, SeverityWarning, "identity", "declared_formula", "A formula is declared for a blend, which has none.", "No formula for a blend."},

	// quantity
	{CodeQtyMissing, SeverityError, "quantity", "total_net_quantity", "No quantity is declared: neither the total net mass nor a fill per package.", "total_net_quantity as a decimal number with a dot, e.g. 1250.5, or net_fill_per_package with package_count."},
	{CodeQtyFormat, SeverityError, "quantity", "total_net_quantity", "The total net quantity or the fill per package is not a plain decimal number (a sign, a comma, a space or thousands separator, an exponent, a unit inside the number, more than 18 digits); the finding's field names which.", "Digits with at most one dot as the decimal separator, e.g. 1250.5."},
	{CodeQtyNotPositive, SeverityError, "quantity", "total_net_quantity", "The total net quantity or the fill per package is zero or negative.", "A quantity above zero."},
	{CodeQtyTooLarge, SeverityError, "quantity", "total_net_quantity", "The net mass exceeds 100,000 t in one record.", "A net mass of at most 100,000 t (10^8 kg)."},
	{CodeQtyUnitUnknown, SeverityError, "quantity", "quantity_unit", "The unit is missing, unknown or ambiguous (\"ton\").", "kg, t (metric tonne), g or lb (0.45359237 kg)."},
	{CodeQtyTooSmall, SeverityError, "quantity", "total_net_quantity", "The net mass is above zero but below 0.000000001 kg, the smallest step the register stores (it would be stored as 0 kg).", "A net mass of at least 0.000000001 kg (10^-9 kg)."},
	{CodeQtyPackagesInvalid, SeverityError, "quantity", "package_count", "The package count is negative or above 10^9.", "Empty or 0 (not declared), or the number of packages."},
	{CodeQtyFillNoPackages, SeverityError, "quantity", "net_fill_per_package", "A net fill per package is given without a package count, so no total follows from it.", "package_count with the fill, or only total_net_quantity."},
	{CodeQtyTotalFillDisagree, SeverityError, "quantity", "total_net_quantity", "The total net quantity and the fill per package times the package count disagree by more than the last digit written of each (half a unit of the last decimal of the total, plus half a unit of the last decimal of the fill per package).", "Figures that agree, e.g. total 113 with 10 packages of 11.3; or only the total."},
	{CodeQtyFillLarge, SeverityNotice, "quantity", "package_count", "More than 1000 kg net per package, more than a ton container's usual fill (common practice); the total may have been given as the fill, or the package count is short. An ISO tank declared as one package draws it too.", "Accepted; for review."},
	{CodeQtyFillSmall, SeverityNotice, "quantity", "package_count", "Less than 0.1 kg net per package, less than the smallest refrigerant cans (common practice); grams and kilograms, or the package count, may have been confused. Not raised for laboratory purpose.", "Accepted; for review: check the unit and the package count."},

	// party
	{CodePartnerMissing, SeverityError, "party", "partner_country", "No partner country is declared.", "An ISO 3166-1 alpha-2 code, e.g. XA."},
	{CodePartnerFormat, SeverityError, "party", "partner_country", "The partner country is not two letters.", "An ISO 3166-1 alpha-2 code (two letters A-Z, any case)."},
	{CodePartnerUnknown, SeverityWarning, "party", "partner_country", "No party settings are held for the partner country, so whether it is bound by the Protocol could not be checked.", "Accepted for review; the authority should add the country's settings."},
	{CodePartnerSelf, SeverityError, "party", "partner_country", "The partner country is the reporting Party itself.", "The other country of the shipment."},
	{CodePartnerNonParty, SeverityError, "party", "partner_country", "The partner is not bound by the control measures for a group in the shipment, and the Article 4 ban on trade with non-Parties for that group and direction was in force on the declaration date.", "A partner bound for the group; the message gives the ban's start date. (Article 4 para 8 exceptions are decided by the Meeting of the Parties and are not modelled.)"},
	{CodePartnerNotBound, SeverityNotice, "party", "partner_country", "The partner is not bound by the control measures for a group in the shipment, but the trade ban for that group had not started on the declaration date. An export to it is not deducted from consumption.", "Accepted."},

	// dates
	{CodeDateMissing, SeverityError, "dates", "declaration_date", "No declaration date is given.", "YYYY-MM-DD."},
	{CodeDateFormat, SeverityError, "dates", "declaration_date", "The declaration date is not a valid ISO 8601 calendar date.", "YYYY-MM-DD, a real calendar day from 1900 on, e.g. 2025-03-31."},
	{CodeDateFuture, SeverityError, "dates", "declaration_date", "The declaration date lies further in the future than the tolerance (2 days unless configured).", "A date up to today plus the tolerance."},
	{CodeLicenceNotYetValid, SeverityError, "dates", "declaration_date", "The declaration date is before the licence's first day of validity.", "A date inside the licence's validity."},
	{CodeLicenceExpired, SeverityError, "dates", "declaration_date", "The declaration date is after the licence's last day of validity.", "A date inside the licence's validity."},
	{CodeYearClosed, SeverityError, "dates", "declaration_date", "The declaration date falls in a reporting year an officer closed; nothing declared in it is recorded, voided or corrected (given by recording, not by a check alone).", "A date in an open year, or the year reopened first (with a reason)."},

	// licence
	{CodeLicenceMissing, SeverityError, "licence", "licence_number", "An import, export or re-export of a controlled substance names no licence (Article 4B).", "The number of a licence of the declaring company."},
	{CodeLicenceUnknown, SeverityError, "licence", "licence_number", "No licence with this number exists.", "The number of an issued licence."},
	{CodeLicenceCompany, SeverityError, "licence", "licence_number", "The licence belongs to another company.", "A licence held by the declaring company."},
	{CodeLicenceDirection, SeverityError, "licence", "direction", "The licence does not cover the declared direction.", "A direction the licence lists (an export licence also covers re-export)."},
	{CodeLicenceInactive, SeverityError, "licence", "licence_number", "The licence was a draft, suspended or revoked on the declaration date (its dated status history decides).", "A licence active on the declaration date."},
	{CodeLicenceScope, SeverityError, "licence", "substance", "No quota line of the licence covers a controlled substance in the shipment (by Annex group or by substance).", "A licence with a quota line for the substance or its Annex group."},
	{CodeLicenceChanged, SeverityError, "licence", "licence_number", "When recording: the licence was amended, or its status or a quota line changed, between the check of the record and its writing; nothing was recorded for the record.", "The same record sent again: it is judged on the licence as it now stands."},

	// quota
	{CodeQuotaExceeded, SeverityError, "quota", "total_net_quantity", "The shipment draws more than remains on the quota line (after earlier records of the same batch).", "At most the remaining amount, in the line's unit (metric t, ODP t or CO2-eq t)."},
	{CodeQuotaNearLimit, SeverityNotice, "quota", "total_net_quantity", "After this shipment more than 90 % of the quota line is used.", "Accepted."},
	{CodeQuotaLineInvalid, SeverityError, "quota", "licence_number", "The quota line the shipment would draw on has no unit or a negative allocation.", "A quota line in metric t, ODP t or CO2-eq t with an allocation of zero or more."},

	// phase-out
	{CodePhasedOut, SeverityError, "phase-out", "purpose", "The reporting Party's allowed consumption of the group is zero in the declaration year, and the import is neither for an exempted purpose nor of used, recycled or reclaimed material.", "Feedstock, destruction, laboratory, essential use, critical use, process agent, QPS (methyl bromide), or used/recycled/reclaimed material."},
	{CodePhasedOutExempt, SeverityNotice, "phase-out", "purpose", "The group is phased out for the reporting Party, and the import passes because of its purpose or condition.", "Accepted; the exemption is reported as its decision says."},
	{CodeExemptUseWrongGroup, SeverityError, "phase-out", "purpose", "Critical use is declared for a phased-out group other than methyl bromide; critical uses exist only for methyl bromide (Article 2H para 5; Decision IX/6).", "The use the substance is authorised for; otherwise the goods are held."},
	{CodeExemptUseUnauthorised, SeverityError, "phase-out", "purpose", "An essential, critical (methyl bromide), laboratory/analytical or process-agent use of a phased-out group is declared, but the licence does not list that purpose: the use needs an authorisation (Decision IV/25 essential uses; Article 2H para 5 and Decision IX/6 critical uses; Decision VI/9 laboratory and analytical uses; Decision X/14 process agents).", "A licence that lists the purpose or holds a quota line limited to it (an allowance), issued within what the Parties authorised; the import then draws on the allowance, else on the licence's quota lines like any other."},
	{CodeHCFCTailUse, SeverityError, "phase-out", "purpose", "An HCFC import during a servicing tail (non-Article 5 2020-2029, Article 2F para 6; Article 5 2030-2039, Article 5 para 8 ter (e)) declares a use the tail does not allow.", "servicing (refrigeration and air-conditioning equipment), fire-protection-servicing, rocket-engine-solvent or medical-aerosol-burns (added by the 2018 adjustment, Decision XXX/2; the uses as listed here are from memory), or a use outside consumption (feedstock, destruction, process agent) or an authorised exempted use."},
	{CodeHCFCTailUseMissing, SeverityWarning, "phase-out", "purpose", "An HCFC import during a servicing tail declares no purpose, so whether it serves a use the tail allows is not known.", "Accepted for review; declare the purpose."},
	{CodeScheduleUnknown, SeverityNotice, "phase-out", "substance", "No control schedule is known for the group, year and the reporting Party's type, so the phase-out was not checked.", "Accepted."},

	// purpose
	{CodePurposeMissing, SeverityNotice, "purpose", "purpose", "No purpose is declared; the shipment is treated as ordinary use.", "Accepted; declare a purpose to claim an exemption."},
	{CodeQPSNotMB, SeverityError, "purpose", "purpose", "Quarantine and pre-shipment (QPS) is declared for a shipment without methyl bromide.", "QPS only for methyl bromide (Annex E)."},
	{CodePurposeNotLicensed, SeverityError, "purpose", "purpose", "Feedstock or destruction is declared, but the licence does not list it as a special purpose.", "A licence that lists the purpose, or another purpose."},
	{CodePurposeNotCounted, SeverityNotice, "purpose", "purpose", "The purpose (feedstock, destruction, process agent, QPS) takes an import out of calculated consumption (an export to a Party is deducted whatever its purpose).", "Accepted; the amount is reported but not counted in consumption."},
	{CodeRecoveredNotCounted, SeverityNotice, "purpose", "condition", "Used, recycled or reclaimed material is not counted in consumption (Decision IV/24, if reported under Article 7; not for an Article 5 Party's base-year consumption).", "Accepted."},
	{CodeTransitNotCounted, SeverityNotice, "purpose", "direction", "Transit is not an import or an export and is not counted in consumption.", "Accepted."},

	// mixture
	{CodeMixAdHoc, SeverityNotice, "mixture", "declared_composition", "No substance is named; the figures come from the declared composition.", "Accepted."},
	{CodeMixComponentUnknown, SeverityError, "mixture", "declared_composition", "A component of the declared composition does not resolve to exactly one catalogue substance.", "A designation, R-number or CAS number of one substance."},
	{CodeMixShareInvalid, SeverityError, "mixture", "declared_composition", "A component's mass percent is not above 0 and at most 100.", "A mass percent above 0 and at most 100."},
	{CodeMixSum, SeverityError, "mixture", "declared_composition", "The declared mass percents do not sum to 100 (within 0.01).", "Shares summing to 100 ± 0.01."},
	{CodeMixComponentMismatch, SeverityError, "mixture", "declared_composition", "The declared composition names other components than the declared substance or blend has.", "The components of the declared blend (or the declared substance alone at 100 %)."},
	{CodeMixOutOfTolerance, SeverityError, "mixture", "declared_composition", "A component's declared mass percent lies outside the blend's ASHRAE 34 composition tolerance.", "A share inside nominal − tolerance to nominal + tolerance, named in the message."},
	{CodeMixTooMany, SeverityError, "mixture", "declared_composition", "The declared or measured composition lists more than 16 components. The record is checked no further.", "At most 16 components, each substance once."},

	// duplicates
	{CodeDupKeyConflict, SeverityError, "duplicates", "record_key", "A record with the same company and key but different content was seen before.", "A new key for a new record; the same content when sending a record again."},
	{CodeDupReplay, SeverityNotice, "duplicates", "record_key", "A record with the same company, key and content was seen before; it is a replay and is not counted again.", "Accepted; nothing is drawn or counted twice."},

	// measurement
	{CodeMeasuredUnreadable, SeverityError, "measurement", "measured_composition", "The measured composition cannot be used: a share out of 0 to 100, a negative uncertainty, an unknown, ambiguous or blend identifier, a substance given twice, shares summing further than 2 points from 100, or nothing but air.", "identifier=percent[±uncertainty] shares naming catalogue substances, air given as air=percent, summing to 100 ± 2."},
	{CodeMeasuredContradicts, SeverityError, "measurement", "measured_composition", "With air set aside and the rest renormalised, a component of the measured composition lies outside the declared substance's or blend's composition tolerance (ASHRAE 34), even widened by the reading's uncertainty; the message names the entries that fit instead, or the closest ones.", "A reading within the declared entry's tolerance; otherwise the declaration is to be corrected or the goods held."},
	{CodeMeasuredHiddenControlled, SeverityError, "measurement", "measured_composition", "The reading shows a controlled substance (above its uncertainty) that the declared substance or blend does not contain; the message gives its Annex group and the ODP tonnes (and, for Annex F, CO2-eq tonnes) it would draw at the declared mass.", "A declaration that names what the cylinder holds, with a licence and quota for it."},
	{CodeMeasuredNonCondensables, SeverityWarning, "measurement", "measured_composition", "The reading shows more than 1.5 mass % air or other non-condensables; a properly filled cylinder holds next to none (common practice).", "Accepted for review; the share is set aside before matching."},
	{CodeMeasuredConfirms, SeverityNotice, "measurement", "measured_composition", "Every component of the measured composition lies within the declared entry's composition tolerance, widened by the reading's uncertainty.", "Accepted; the reading supports the declaration."},
	{CodeMeasuredNotCompared, SeverityNotice, "measurement", "measured_composition", "A measured composition is given, but no catalogue substance or blend is declared (only a composition, or an identifier that did not resolve), so it was matched against the catalogue only.", "Accepted; the message names what the reading fits."},
}

var codeIndex = func() map[string]int {
	m := make(map[string]int, len(codeTable))
	for i, c := range codeTable {
		if _, dup := m[c.Code]; dup {
			panic("validate: duplicate code in table: " + c.Code) // programming error, caught by tests
		}
		m[c.Code] = i
	}
	return m
}()

// CodeTable returns the documentation of every finding code, grouped by rule family.
func CodeTable() []CodeInfo {
	out := make([]CodeInfo, len(codeTable))
	copy(out, codeTable)
	return out
}

// LookupCode returns the documentation of one code.
func LookupCode(code string) (CodeInfo, bool) {
	i, ok := codeIndex[code]
	if !ok {
		return CodeInfo{}, false
	}
	return codeTable[i], true
}

// newFinding builds a finding with the severity the table gives the code. The field defaults
// to the table's field.
func newFinding(code, field, msg string) Finding {
	i, ok := codeIndex[code]
	if !ok {
		panic("validate: finding code not in table: " + code) // programming error, caught by tests
	}
	if field == "" {
		field = codeTable[i].Field
	}
	return Finding{Code: code, Severity: codeTable[i].Severity, Field: field, Message: msg}
}

// WriteCodeTableMarkdown renders the code table as a Markdown table, one section per family.
func WriteCodeTableMarkdown(w io.Writer) error {
	var b strings.Builder
	family := ""
	for _, c := range codeTable {
		if c.Family != family {
			if family != "" {
				b.WriteString("\n")
			}
			family = c.Family
			fmt.Fprintf(&b, "### %s\n\n", family)
			b.WriteString("| Code | Severity | Field | Meaning | Accepted |\n|---|---|---|---|---|\n")
		}
		field := c.Field
		if field == "" {
			field = "(varies)"
		}
		fmt.Fprintf(&b, "| `%s` | %s | `%s` | %s | %s |\n", c.Code, c.Severity, field, mdCell(c.Meaning), mdCell(c.Accepted))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// CodeTableMarkdown returns WriteCodeTableMarkdown's output as a string.
func CodeTableMarkdown() string {
	var b strings.Builder
	_ = WriteCodeTableMarkdown(&b) // a strings.Builder does not fail
	return b.String()
}

func mdCell(s string) string {
	return strings.NewReplacer("|", `\|`, "\n", " ").Replace(s)
}
