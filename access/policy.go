package access

import (
	"sort"
	"strings"
)

// Grant is one row of the policy table: the roles that may call a method.
type Grant struct {
	// Public methods may be called without any credential (and by every role).
	Public bool
	// Roles may call the method. A company-scoped role (trader) is further limited to its
	// own company by the workflow layer.
	Roles []Role
	// ByCompany: the workflow layer limits a company-scoped role to its own company's
	// records (refusing another company's with a reason, filtering lists).
	ByCompany bool
}

// Role sets used by the table below.
var (
	everyRole   = []Role{RoleOfficer, RoleCustoms, RoleTrader, RoleAuditor, RoleReader}
	officerOnly = []Role{RoleOfficer}
	// shipmentWork: checking and recording shipments (a trader only its own company's).
	shipmentWork = []Role{RoleOfficer, RoleCustoms, RoleTrader}
	// shipmentCheck: checking without recording; the auditor may re-check a record.
	shipmentCheck = []Role{RoleOfficer, RoleCustoms, RoleTrader, RoleAuditor}
	// registerRead: licences, balances and companies (a trader only its own).
	registerRead = []Role{RoleOfficer, RoleCustoms, RoleTrader, RoleAuditor}
	// nationalRead: the national figures (consumption, baselines, compliance, plans).
	nationalRead = []Role{RoleOfficer, RoleAuditor}
	// trailRead: the audit trail and the list of credentials.
	trailRead = []Role{RoleOfficer, RoleAuditor}
)

// Policy is the one table of every RPC the server registers and the roles that may call
// it. A method missing here is refused to everyone (default deny); a test enumerates the
// server's registered methods and fails when one is missing.
var Policy = map[string]Grant{
	// Health and reflection: for probes and tools, no credential needed.
	"/grpc.health.v1.Health/Check":                                   {Public: true},
	"/grpc.health.v1.Health/List":                                    {Public: true},
	"/grpc.health.v1.Health/Watch":                                   {Public: true},
	"/grpc.reflection.v1.ServerReflection/ServerReflectionInfo":      {Public: true},
	"/grpc.reflection.v1alpha.ServerReflection/ServerReflectionInfo": {Public: true},
	"/halovet.v1.CatalogueService/GetEntry":                          {Roles: everyRole},
	"/halovet.v1.CatalogueService/ListEntries":                       {Roles: everyRole},
	"/halovet.v1.CatalogueService/ResolveIdentifier":                 {Roles: everyRole},
	"/halovet.v1.CatalogueService/EvaluateMixture":                   {Roles: everyRole},
	"/halovet.v1.CatalogueService/UpsertSubstance":                   {Roles: officerOnly},
	"/halovet.v1.AnalysisService/AnalyseReading":                     {Roles: everyRole},
	"/halovet.v1.ShipmentService/CheckShipment":                      {Roles: shipmentCheck, ByCompany: true},
	"/halovet.v1.ShipmentService/CheckShipments":                     {Roles: shipmentCheck, ByCompany: true},
	"/halovet.v1.ShipmentService/RecordShipments":                    {Roles: shipmentWork, ByCompany: true},
	"/halovet.v1.ShipmentService/CheckShipmentBatch":                 {Roles: shipmentCheck, ByCompany: true},
	"/halovet.v1.ShipmentService/RecordShipmentBatch":                {Roles: shipmentWork, ByCompany: true},
	"/halovet.v1.ShipmentService/ListShipments":                      {Roles: registerRead, ByCompany: true},
	"/halovet.v1.ShipmentService/GetShipment":                        {Roles: registerRead, ByCompany: true},
	"/halovet.v1.ShipmentService/VoidShipment":                       {Roles: officerOnly},
	"/halovet.v1.ShipmentService/CorrectShipment":                    {Roles: officerOnly},
	"/halovet.v1.ShipmentService/CloseYear":                          {Roles: officerOnly},
	"/halovet.v1.ShipmentService/ReopenYear":                         {Roles: officerOnly},
	"/halovet.v1.ShipmentService/ListClosedYears":                    {Roles: registerRead},
	"/halovet.v1.LicensingService/SetReportingParty":                 {Roles: officerOnly},
	"/halovet.v1.LicensingService/CloseQuotaLine":                    {Roles: officerOnly},
	"/halovet.v1.LicensingService/LoadRegistry":                      {Roles: officerOnly},
	"/halovet.v1.LicensingService/ListLicenceHistory":                {Roles: registerRead, ByCompany: true},
	"/halovet.v1.LicensingService/PutParty":                          {Roles: officerOnly},
	"/halovet.v1.LicensingService/GetParty":                          {Roles: everyRole},
	"/halovet.v1.LicensingService/ListParties":                       {Roles: everyRole},
	"/halovet.v1.LicensingService/RegisterCompany":                   {Roles: officerOnly},
	"/halovet.v1.LicensingService/ListCompanies":                     {Roles: registerRead, ByCompany: true},
	"/halovet.v1.LicensingService/IssueLicence":                      {Roles: officerOnly},
	"/halovet.v1.LicensingService/AmendLicence":                      {Roles: officerOnly},
	"/halovet.v1.LicensingService/SetLicenceStatus":                  {Roles: officerOnly},
	"/halovet.v1.LicensingService/GetLicence":                        {Roles: registerRead, ByCompany: true},
	"/halovet.v1.LicensingService/ListLicences":                      {Roles: registerRead, ByCompany: true},
	"/halovet.v1.ConsumptionService/RecordNationalEntries":           {Roles: officerOnly},
	"/halovet.v1.ConsumptionService/ListNationalEntries":             {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/GetConsumption":                  {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/GetBaseline":                     {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/AssessCompliance":                {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/PlanQuotas":                      {Roles: nationalRead}, // issuing the drafts: officer (see ArgumentRoles)
	"/halovet.v1.ConsumptionService/RecordExemptions":                {Roles: officerOnly},
	"/halovet.v1.ConsumptionService/ListExemptions":                  {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/RecordOfficialFigures":           {Roles: officerOnly},
	"/halovet.v1.ConsumptionService/ListOfficialFigures":             {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/RecordHfc23Entries":              {Roles: officerOnly},
	"/halovet.v1.ConsumptionService/ListHfc23Entries":                {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/GetYearReport":                   {Roles: nationalRead},
	"/halovet.v1.ConsumptionService/RecordPartnerExports":            {Roles: officerOnly},
	"/halovet.v1.ConsumptionService/ReconcilePartnerExports":         {Roles: nationalRead},
	"/halovet.v1.AccessService/IssueCredential":                      {Roles: officerOnly},
	"/halovet.v1.AccessService/ListCredentials":                      {Roles: trailRead},
	"/halovet.v1.AccessService/RevokeCredential":                     {Roles: officerOnly},
	"/halovet.v1.AccessService/ListAuditEvents":                      {Roles: trailRead},
	"/halovet.v1.AccessService/VerifyAuditChain":                     {Roles: trailRead},
}

// Allowed reports whether role may call fullMethod ("/package.Service/Method"). Unknown
// methods are refused; RoleAnonymous may call public methods only.
func Allowed(role Role, fullMethod string) bool {
	g, ok := Policy[fullMethod]
	if !ok {
		return false
	}
	if g.Public {
		return true
	}
	for _, r := range g.Roles {
		if r == role && role != RoleAnonymous {
			return true
		}
	}
	return false
}

// Methods returns the policy table's methods in order.
func Methods() []string {
	out := make([]string, 0, len(Policy))
	for m := range Policy {
		out = append(out, m)
	}
	sort.Strings(out)
	return out
}

// RoleTable is the policy as a Markdown table (method, then a column per role, "yes" or
// "own company" or blank); README's "Access" section is tested against it.
func RoleTable() string {
	var b strings.Builder
	b.WriteString("| method |")
	for _, r := range Roles {
		b.WriteString(" " + string(r) + " |")
	}
	b.WriteString(" no credential |\n|---|")
	for range Roles {
		b.WriteString("---|")
	}
	b.WriteString("---|\n")
	for _, m := range Methods() {
		b.WriteString("| `" + strings.TrimPrefix(m, "/") + "` |")
		for _, r := range Roles {
			cell := ""
			if Allowed(r, m) {
				cell = "yes"
				if CompanyScoped(r) && Policy[m].ByCompany {
					cell = "own company"
				}
			}
			b.WriteString(" " + cell + " |")
		}
		cell := ""
		if Allowed(RoleAnonymous, m) {
			cell = "yes"
		}
		b.WriteString(" " + cell + " |\n")
	}
	return b.String()
}
