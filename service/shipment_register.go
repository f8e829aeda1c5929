package service

import (
	"context"
	"errors"
	"fmt"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/ledger"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/store"
	"github.com/halovet/halovet/validate"
)

// The register of recorded shipments: list and read them, void and correct them, and
// close reporting years.

// maxReasonChars (licensing_history.go) bounds the reason of a void, a correction, a close
// or a reopen too.

// maxShipmentPage is the largest page of ListShipments.
const maxShipmentPage = 1000

// failed builds a FailedPrecondition status listing the fields whose state refuses the
// call: the request is well formed, the register's state does not allow it.
func failed(vs ...fieldViolation) error {
	br := &errdetails.BadRequest{}
	var msg []string
	for _, v := range vs {
		br.FieldViolations = append(br.FieldViolations, &errdetails.BadRequest_FieldViolation{Field: v.field, Description: v.why})
		msg = append(msg, v.field+": "+v.why)
	}
	st := status.New(codes.FailedPrecondition, strings.Join(msg, "; "))
	if d, err := st.WithDetails(br); err == nil {
		return d.Err()
	}
	return st.Err()
}

// reasonProblem says what is wrong with a reason, or "".
func reasonProblem(reason string) string {
	r := strings.TrimSpace(reason)
	switch {
	case r == "":
		return "is required: say why (it is kept in the register and the audit log)"
	case utf8.RuneCountInString(r) > maxReasonChars:
		return fmt.Sprintf("is %d characters long; at most %d are accepted", utf8.RuneCountInString(r), maxReasonChars)
	}
	if p := validate.TextProblem(r); p != "" {
		return p
	}
	return ""
}

// registerError maps the store's refusals of a change to statuses naming the field.
func (s *Server) registerError(ctx context.Context, err error, idField string) error {
	var yc *store.YearClosedError
	var se *store.StateError
	switch {
	case errors.As(err, &yc):
		return failed(fieldViolation{"declaration_date", yc.Error() + " (ReopenYear, 'halovet year reopen')"})
	case errors.As(err, &se):
		return failed(fieldViolation{idField, se.Error()})
	case errors.Is(err, store.ErrNotFound):
		return notFoundStatus(fmt.Sprintf("%s: %v", idField, err))
	}
	return toStatus(ctx, s.log, err)
}

func rfc3339(t time.Time) string {
	if t.IsZero() {
		return ""
	}
	return t.UTC().Format(time.RFC3339Nano)
}

var stateProto = map[string]halovetv1.ShipmentState{
	store.StateLive:       halovetv1.ShipmentState_SHIPMENT_STATE_LIVE,
	store.StateVoided:     halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED,
	store.StateSuperseded: halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED,
}

var stateText = map[halovetv1.ShipmentState]string{
	halovetv1.ShipmentState_SHIPMENT_STATE_LIVE:       store.StateLive,
	halovetv1.ShipmentState_SHIPMENT_STATE_VOIDED:     store.StateVoided,
	halovetv1.ShipmentState_SHIPMENT_STATE_SUPERSEDED: store.StateSuperseded,
}

// storedVerdict decodes a verdict kept with a shipment; nil when none was kept.
func storedVerdict(b []byte) (*halovetv1.Verdict, error) {
	if b == nil {
		return nil, nil
	}
	v := &halovetv1.Verdict{}
	if err := proto.Unmarshal(b, v); err != nil {
		return nil, fmt.Errorf("stored verdict: %w", err)
	}
	return v, nil
}

// encodeVerdict is the form a verdict is kept in (deterministic, so equal verdicts are
// equal bytes).
func encodeVerdict(v *halovetv1.Verdict) []byte {
	b, err := proto.MarshalOptions{Deterministic: true}.Marshal(v)
	if err != nil {
		return nil // a verdict always encodes; a nil keeps none rather than a broken one
	}
	return b
}

// withStored marks a verdict with the stored shipment it is about.
func withStored(v *halovetv1.Verdict, ref *store.StoredRef) {
	v.ShipmentId, v.RecordedAt, v.State = ref.ID, rfc3339(ref.RecordedAt), stateProto[ref.State]
}

func recordedToProto(x *store.StoredShipment) (*halovetv1.RecordedShipment, error) {
	rec := &halovetv1.ShipmentRecord{}
	if err := protojson.Unmarshal(x.RecordJSON, rec); err != nil {
		return nil, fmt.Errorf("shipment %d: stored record: %w", x.ID, err)
	}
	v, err := storedVerdict(x.Verdict)
	if err != nil {
		return nil, fmt.Errorf("shipment %d: %w", x.ID, err)
	}
	if v != nil {
		withStored(v, &store.StoredRef{ID: x.ID, State: x.State, RecordedAt: x.RecordedAt})
		v.Recorded = true
	}
	out := &halovetv1.RecordedShipment{ShipmentId: x.ID, State: stateProto[x.State], Version: int32(x.Version),
		PreviousShipmentId: x.PreviousID, Record: rec, Verdict: v, RecordedAt: rfc3339(x.RecordedAt),
		ChangedAt: rfc3339(x.ChangedAt), ChangeReason: x.ChangeReason, DeclarationDate: x.DeclarationDate.Format(dateLayout),
		ResolvedDesignation: x.ResolvedDesignation, NetMassKg: x.NetMassKg.Float(), OdpTonnes: x.ODPTonnes.Float(),
		Co2ETonnes: x.CO2eTonnes.Float(), CountsInConsumption: x.CountsInConsumption}
	for _, d := range x.Draws {
		out.Draws = append(out.Draws, &halovetv1.QuotaDraw{LicenceNumber: d.LicenceNumber, LineNumber: int32(d.LineNumber),
			Amount: d.Amount.Float(), Released: d.Released, ReleasedAt: rfc3339(d.ReleasedAt)})
	}
	return out, nil
}

// Listing ---------------------------------------------------------------------------------

// annexGroups is what an annex_group filter accepts: a group, or "F" for Annex F.
var annexGroups = map[string][]string{
	"A/I": {"A/I"}, "A/II": {"A/II"}, "B/I": {"B/I"}, "B/II": {"B/II"}, "B/III": {"B/III"},
	"C/I": {"C/I"}, "C/II": {"C/II"}, "C/III": {"C/III"}, "E/I": {"E/I"},
	"F/I": {"F/I"}, "F/II": {"F/II"}, "F": {"F/I", "F/II"},
}

func (s *Server) shipmentFilter(req *halovetv1.ListShipmentsRequest) (store.ShipmentFilter, []fieldViolation) {
	var vs []fieldViolation
	f := store.ShipmentFilter{CompanyID: strings.TrimSpace(req.GetCompanyId()), LicenceNumber: strings.TrimSpace(req.GetLicenceNumber()),
		RecordKey: strings.TrimSpace(req.GetRecordKey()), Partner: strings.ToUpper(strings.TrimSpace(req.GetPartnerCountry()))}
	if f.Partner != "" && (len(f.Partner) != 2 || f.Partner[0] < 'A' || f.Partner[0] > 'Z' || f.Partner[1] < 'A' || f.Partner[1] > 'Z') {
		vs = append(vs, fieldViolation{"partner_country", fmt.Sprintf("%q is not an ISO 3166-1 alpha-2 code (two letters)", req.GetPartnerCountry())})
	}
	date := func(field, v string) time.Time {
		if strings.TrimSpace(v) == "" {
			return time.Time{}
		}
		t, err := time.Parse(dateLayout, strings.TrimSpace(v))
		if err != nil {
			vs = append(vs, fieldViolation{field, fmt.Sprintf("%q is not a date; accepted: YYYY-MM-DD", v)})
		}
		return t
	}
	f.From, f.To = date("from_date", req.GetFromDate()), date("to_date", req.GetToDate())
	if y := req.GetYear(); y != 0 {
		switch {
		case y < 1986 || y > 2200:
			vs = append(vs, fieldViolation{"year", fmt.Sprintf("%d is outside 1986 to 2200", y)})
		case !f.From.IsZero() || !f.To.IsZero():
			vs = append(vs, fieldViolation{"year", "give a year or a date range (from_date, to_date), not both"})
		default:
			f.From = time.Date(int(y), 1, 1, 0, 0, 0, 0, time.UTC)
			f.To = time.Date(int(y), 12, 31, 0, 0, 0, 0, time.UTC)
		}
	}
	if !f.From.IsZero() && !f.To.IsZero() && f.To.Before(f.From) {
		vs = append(vs, fieldViolation{"to_date", "is before from_date"})
	}
	if sub := strings.TrimSpace(req.GetSubstance()); sub != "" {
		c, ok := s.cat.Load().Resolve(sub).Unique()
		if !ok {
			vs = append(vs, fieldViolation{"substance", fmt.Sprintf("%q names no one catalogue substance or blend; give a designation such as HCFC-22 or R-410A", sub)})
		} else {
			f.Substance = c.Designation
		}
	}
	if g := strings.ToUpper(strings.TrimSpace(req.GetAnnexGroup())); g != "" {
		gs, ok := annexGroups[g]
		if !ok {
			vs = append(vs, fieldViolation{"annex_group", fmt.Sprintf("%q is not an Annex group; accepted: A/I, A/II, B/I, B/II, B/III, C/I, C/II, C/III, E/I, F/I, F/II or F (both)", req.GetAnnexGroup())})
		}
		f.AnnexGroups = gs
	}
	if d := req.GetDirection(); d != halovetv1.Direction_DIRECTION_UNSPECIFIED {
		if t, ok := directionText[d]; ok {
			f.Direction = t
		} else {
			vs = append(vs, fieldViolation{"direction", fmt.Sprintf("%d is not a direction", d)})
		}
	}
	if p := req.GetPurpose(); p != halovetv1.Purpose_PURPOSE_UNSPECIFIED {
		if t, ok := purposeText[p]; ok {
			f.Purpose = t
		} else {
			vs = append(vs, fieldViolation{"purpose", fmt.Sprintf("%d is not a purpose", p)})
		}
	}
	if c := req.GetCondition(); c != halovetv1.Condition_CONDITION_UNSPECIFIED {
		if c < halovetv1.Condition_CONDITION_VIRGIN || c > halovetv1.Condition_CONDITION_RECLAIMED {
			vs = append(vs, fieldViolation{"condition", fmt.Sprintf("%d is not a condition", c)})
		} else {
			f.Condition = validate.Condition(c).String()
		}
	}
	for i, st := range req.GetStates() {
		t, ok := stateText[st]
		if !ok {
			vs = append(vs, fieldViolation{fmt.Sprintf("states[%d]", i), "accepted: SHIPMENT_STATE_LIVE, SHIPMENT_STATE_VOIDED, SHIPMENT_STATE_SUPERSEDED"})
			continue
		}
		f.States = append(f.States, t)
	}
	switch n := req.GetPageSize(); {
	case n < 0 || n > maxShipmentPage:
		vs = append(vs, fieldViolation{"page_size", fmt.Sprintf("%d is outside 0 to %d (0 means 100)", n, maxShipmentPage)})
	case n == 0:
		f.Limit = 100
	default:
		f.Limit = int(n)
	}
	return f, vs
}

// ListShipments lists recorded shipments, a page at a time.
func (x *shipmentServer) ListShipments(ctx context.Context, req *halovetv1.ListShipmentsRequest) (*halovetv1.ListShipmentsResponse, error) {
	f, vs := x.srv.shipmentFilter(req)
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	if tok := req.GetPageToken(); tok != "" {
		after, err := x.srv.openPageToken(ctx, "shipments", filterHash(req), tok)
		if errors.Is(err, errPageToken) {
			return nil, invalid(fieldViolation{"page_token", err.Error()})
		}
		if err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
		f.AfterID = after
	}
	// A trader sees its own company's records only.
	if own, scoped := callCompany(ctx); scoped {
		if f.CompanyID != "" && f.CompanyID != own {
			return nil, outOfScope("company_id", f.CompanyID, own)
		}
		f.CompanyID = own
	}
	limit := f.Limit
	f.Limit = limit + 1 // one more tells whether there is a next page
	rows, err := x.srv.store.ListShipments(ctx, f)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	out := &halovetv1.ListShipmentsResponse{}
	if len(rows) > limit {
		rows = rows[:limit]
		if out.NextPageToken, err = x.srv.issuePageToken(ctx, "shipments", filterHash(req), rows[len(rows)-1].ID); err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
	}
	for i := range rows {
		r, err := recordedToProto(&rows[i])
		if err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
		out.Shipments = append(out.Shipments, r)
	}
	return out, nil
}

// GetShipment returns one recorded shipment and its versions.
func (x *shipmentServer) GetShipment(ctx context.Context, req *halovetv1.GetShipmentRequest) (*halovetv1.GetShipmentResponse, error) {
	if req.GetShipmentId() <= 0 {
		return nil, invalid(fieldViolation{"shipment_id", "is required: the id of a recorded shipment (ListShipments gives them)"})
	}
	got, versions, err := x.srv.store.GetShipment(ctx, req.GetShipmentId())
	if err != nil {
		return nil, x.srv.registerError(ctx, err, "shipment_id")
	}
	if own, scoped := callCompany(ctx); scoped && got.CompanyID != own {
		return nil, outOfScope("shipment_id", got.CompanyID, own)
	}
	out := &halovetv1.GetShipmentResponse{}
	if out.Shipment, err = recordedToProto(&got); err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	for i := range versions {
		v, err := recordedToProto(&versions[i])
		if err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
		out.Versions = append(out.Versions, v)
	}
	return out, nil
}

// VoidShipment voids a live recorded shipment.
func (x *shipmentServer) VoidShipment(ctx context.Context, req *halovetv1.VoidShipmentRequest) (*halovetv1.VoidShipmentResponse, error) {
	var vs []fieldViolation
	if req.GetShipmentId() <= 0 {
		vs = append(vs, fieldViolation{"shipment_id", "is required: the id of a live recorded shipment"})
	}
	if p := reasonProblem(req.GetReason()); p != "" {
		vs = append(vs, fieldViolation{"reason", p})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	got, err := x.srv.store.VoidShipment(ctx, req.GetShipmentId(), strings.TrimSpace(req.GetReason()))
	if err != nil {
		return nil, x.srv.registerError(ctx, err, "shipment_id")
	}
	x.srv.registerChanged(ctx, ledger.Change{Licences: drawnLicences(got.Draws)})
	r, err := recordedToProto(&got)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.VoidShipmentResponse{Shipment: r}, nil
}

func drawnLicences(ds []store.StoredDraw) []string {
	var out []string
	for _, d := range ds {
		if len(out) == 0 || out[len(out)-1] != d.LicenceNumber {
			out = append(out, d.LicenceNumber)
		}
	}
	return out
}

// verdictViolations lists a rejected verdict's errors as field violations of the record.
func verdictViolations(v *validate.Verdict) []fieldViolation {
	var vs []fieldViolation
	for _, f := range v.Findings {
		if f.Severity != validate.SeverityError {
			continue
		}
		field := f.Field
		if field == "" {
			if info, ok := validate.LookupCode(f.Code); ok {
				field = info.Field
			}
		}
		if field == "" {
			field = "record"
		} else {
			field = "record." + field
		}
		vs = append(vs, fieldViolation{field, f.Code + ": " + f.Message})
	}
	return vs
}

// CorrectShipment replaces a live recorded shipment by a corrected version.
func (x *shipmentServer) CorrectShipment(ctx context.Context, req *halovetv1.CorrectShipmentRequest) (*halovetv1.CorrectShipmentResponse, error) {
	var vs []fieldViolation
	if req.GetRecord() == nil {
		vs = append(vs, fieldViolation{"record", "is required: the corrected record"})
	}
	if req.GetShipmentId() < 0 {
		vs = append(vs, fieldViolation{"shipment_id", "is negative; give the id of a live recorded shipment, or 0 for the live one of the record's company and key"})
	}
	if p := reasonProblem(req.GetReason()); p != "" {
		vs = append(vs, fieldViolation{"reason", p})
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	pb := req.GetRecord()
	rec := recordFromProto(pb)
	k := recordKey(&rec)
	id := req.GetShipmentId()
	if id == 0 {
		if k[0] == "" || k[1] == "" {
			return nil, invalid(fieldViolation{"shipment_id", "is 0 and the record has no company_id and record_key to find the shipment by"})
		}
		live, err := x.srv.store.ListShipments(ctx, store.ShipmentFilter{CompanyID: k[0], RecordKey: k[1], States: []string{store.StateLive}, Limit: 1})
		if err != nil {
			return nil, toStatus(ctx, x.srv.log, err)
		}
		if len(live) == 0 {
			return nil, notFoundStatus(fmt.Sprintf("record: no live recorded shipment of company %q with record_key %q", k[0], k[1]))
		}
		id = live[0].ID
	}
	cur, _, err := x.srv.store.GetShipment(ctx, id)
	if err != nil {
		return nil, x.srv.registerError(ctx, err, "shipment_id")
	}
	if cur.State != store.StateLive {
		return nil, failed(fieldViolation{"shipment_id", fmt.Sprintf("shipment %d is %s; only a live shipment can be corrected", id, cur.State)})
	}
	if k[0] != cur.CompanyID || k[1] != cur.RecordKey {
		return nil, invalid(fieldViolation{"record.record_key", fmt.Sprintf("a correction keeps the company and key of shipment %d (%s, %s); got (%s, %s)",
			id, cur.CompanyID, cur.RecordKey, k[0], k[1])})
	}
	env, err := x.srv.checkEnvFor(ctx, pb)
	if err != nil {
		return nil, err
	}
	// Checked like a new record; the quota is judged by the store, with the old
	// version's draws given back, at the new version's own draw.
	v := validate.Check(env, &rec, validate.DeferQuota)
	if v.Outcome == validate.OutcomeRejected {
		return nil, invalid(verdictViolations(&v)...)
	}
	if v.Fingerprint == cur.Fingerprint {
		return nil, invalid(fieldViolation{"record", fmt.Sprintf("is the same as shipment %d as recorded; a correction changes something", id)})
	}
	row, err := shipmentRow(pb, &rec, &v)
	if err != nil {
		return nil, status.Errorf(codes.Internal, "record %q: %v", rec.Key, err)
	}
	lic, _ := env.Licence(strings.TrimSpace(rec.LicenceNumber))
	var answer *halovetv1.Verdict
	row.VerdictOnStore = func(res store.RecordResult) []byte {
		fv := v
		fv.Findings = append([]validate.Finding(nil), v.Findings...)
		addBalanceFindings(&fv, lic, res.Balances)
		answer = verdictToProto(&fv)
		answer.Recorded = true
		b := encodeVerdict(answer)
		withStored(answer, &store.StoredRef{ID: res.ShipmentID, State: store.StateLive, RecordedAt: res.RecordedAt})
		return b
	}
	res, err := x.srv.store.CorrectShipment(ctx, id, row, strings.TrimSpace(req.GetReason()))
	if err != nil {
		return nil, x.srv.registerError(ctx, err, "shipment_id")
	}
	switch res.Status {
	case store.RecordStored:
	case store.RecordQuotaShort:
		fs := quotaShortFindings(lic, res, row.Draws)
		return nil, failed(fieldViolation{"record.total_net_quantity", fs.Code + ": " + fs.Message + " (the old version's draws counted as given back)"})
	case store.RecordLicenceInactive:
		return nil, failed(fieldViolation{"record.licence_number", fmt.Sprintf("%s: licence %s is %s", validate.CodeLicenceInactive, res.LicenceNumber, res.Detail)})
	case store.RecordYearClosed:
		return nil, failed(fieldViolation{"record.declaration_date", fmt.Sprintf("%s: reporting year %d is closed (%s); reopen it first", validate.CodeYearClosed, res.Closed.Year, res.Closed.Reason)})
	default:
		return nil, status.Errorf(codes.Internal, "correction of shipment %d: unexpected outcome %v", id, res.Status)
	}
	x.srv.registerChanged(ctx, ledger.Change{Licences: unionLicences(drawnLicences(cur.Draws), row.Draws)})
	got, _, err := x.srv.store.GetShipment(ctx, res.ShipmentID)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	rs, err := recordedToProto(&got)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.CorrectShipmentResponse{Verdict: answer, Shipment: rs}, nil
}

func unionLicences(a []string, ds []store.Draw) []string {
	for _, d := range ds {
		found := false
		for _, x := range a {
			found = found || x == d.LicenceNumber
		}
		if !found {
			a = append(a, d.LicenceNumber)
		}
	}
	return a
}

// quotaLine finds a line of a licence.
func quotaLine(lic *validate.Licence, n int) validate.QuotaLine {
	if lic != nil {
		for _, l := range lic.QuotaLines {
			if l.LineNumber == n {
				return l
			}
		}
	}
	return validate.QuotaLine{LineNumber: n}
}

// addBalanceFindings adds the quota notices a record earned with its own draw, from the
// balances the store drew on (record mode: the balance as of that draw).
func addBalanceFindings(v *validate.Verdict, lic *validate.Licence, bal []store.LineBalance) {
	for _, b := range bal {
		line := quotaLine(lic, b.LineNumber)
		alloc := b.Allocated.Float()
		fs := validate.QuotaFindings(b.LicenceNumber, line, alloc, (b.Allocated - b.Before).Float(), (b.Before - b.After).Float())
		if len(fs) > 0 {
			v.Add(fs...)
		}
	}
}

// quotaShortFindings is the QUOTA_EXCEEDED finding for a row the store turned down, with
// what was left on the line when the row came to draw.
func quotaShortFindings(lic *validate.Licence, res store.RecordResult, draws []store.Draw) validate.Finding {
	line := quotaLine(lic, res.LineNumber)
	var amount store.Nano
	for _, d := range draws {
		if d.LicenceNumber == res.LicenceNumber && d.LineNumber == res.LineNumber {
			amount += d.Amount
		}
	}
	alloc := line.Allocated
	if alloc < res.Remaining.Float() {
		alloc = res.Remaining.Float()
	}
	fs := validate.QuotaFindings(res.LicenceNumber, line, alloc, alloc-res.Remaining.Float(), amount.Float())
	if len(fs) == 0 || fs[0].Code != validate.CodeQuotaExceeded {
		return findingFor(validate.CodeQuotaExceeded, "", fmt.Sprintf("licence %s line %d has %s left when this record comes to draw; it needs %s",
			res.LicenceNumber, res.LineNumber, fmtNano(res.Remaining), fmtNano(amount)))
	}
	return fs[0]
}

func fmtNano(n store.Nano) string {
	s := strconv.FormatFloat(n.Float(), 'f', 9, 64)
	s = strings.TrimRight(s, "0")
	return strings.TrimSuffix(s, ".")
}

// Closed years ----------------------------------------------------------------------------

func closedYearToProto(c store.ClosedYear) *halovetv1.ClosedYear {
	return &halovetv1.ClosedYear{Year: int32(c.Year), ClosedAt: rfc3339(c.ClosedAt), ClosedBy: c.ClosedBy, Reason: c.Reason}
}

func yearReasonViolations(year int32, reason string) []fieldViolation {
	var vs []fieldViolation
	if year < 1986 || year > 2200 {
		vs = append(vs, fieldViolation{"year", fmt.Sprintf("%d is outside 1986 to 2200", year)})
	}
	if p := reasonProblem(reason); p != "" {
		vs = append(vs, fieldViolation{"reason", p})
	}
	return vs
}

// CloseYear closes a reporting year.
func (x *shipmentServer) CloseYear(ctx context.Context, req *halovetv1.CloseYearRequest) (*halovetv1.CloseYearResponse, error) {
	if vs := yearReasonViolations(req.GetYear(), req.GetReason()); len(vs) > 0 {
		return nil, invalid(vs...)
	}
	c, err := x.srv.store.CloseYear(ctx, int(req.GetYear()), strings.TrimSpace(req.GetReason()))
	if errors.Is(err, store.ErrYearState) {
		return nil, failed(fieldViolation{"year", fmt.Sprintf("reporting year %d is closed already", req.GetYear())})
	}
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.CloseYearResponse{ClosedYear: closedYearToProto(c)}, nil
}

// ReopenYear reopens a closed reporting year.
func (x *shipmentServer) ReopenYear(ctx context.Context, req *halovetv1.ReopenYearRequest) (*halovetv1.ReopenYearResponse, error) {
	if vs := yearReasonViolations(req.GetYear(), req.GetReason()); len(vs) > 0 {
		return nil, invalid(vs...)
	}
	err := x.srv.store.ReopenYear(ctx, int(req.GetYear()), strings.TrimSpace(req.GetReason()))
	if errors.Is(err, store.ErrYearState) {
		return nil, failed(fieldViolation{"year", fmt.Sprintf("reporting year %d is not closed", req.GetYear())})
	}
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	return &halovetv1.ReopenYearResponse{}, nil
}

// ListClosedYears lists the closed reporting years.
func (x *shipmentServer) ListClosedYears(ctx context.Context, req *halovetv1.ListClosedYearsRequest) (*halovetv1.ListClosedYearsResponse, error) {
	pg, vs, err := x.srv.openPage(ctx, "closed-years", req)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	if len(vs) > 0 {
		return nil, invalid(vs...)
	}
	cs, err := x.srv.store.ClosedYearsPage(ctx, pg)
	if err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	out := &halovetv1.ListClosedYearsResponse{}
	if cs, out.NextPageToken, err = closePage(ctx, x.srv, "closed-years", req, pg, cs); err != nil {
		return nil, toStatus(ctx, x.srv.log, err)
	}
	for _, c := range cs {
		out.ClosedYears = append(out.ClosedYears, closedYearToProto(c))
	}
	return out, nil
}

// matchingRef returns the stored version of vs with fingerprint fp, the newest first.
func matchingRef(vs []store.StoredRef, fp string) *store.StoredRef {
	for i := len(vs) - 1; i >= 0; i-- {
		if vs[i].Fingerprint == fp {
			return &vs[i]
		}
	}
	return nil
}

// storedRecords is what the register holds of the keys of the records of one check
// message: every stored version, by the record's index.
type storedRecords map[int][]store.StoredRef

// storedFor looks up the stored versions of the records' company and key. A check
// answers a record recorded already by what was recorded, and does not count its draws
// again (they are in the balance already).
func (s *Server) storedFor(ctx context.Context, recs []*halovetv1.ShipmentRecord) (storedRecords, error) {
	var keys [][2]string
	var at []int
	for i, pb := range recs {
		k := [2]string{strings.TrimSpace(pb.GetCompanyId()), strings.TrimSpace(pb.GetRecordKey())}
		if k[0] == "" || k[1] == "" || !validate.Storable(k[0]) || !validate.Storable(k[1]) {
			continue
		}
		keys = append(keys, k)
		at = append(at, i)
	}
	if len(keys) == 0 {
		return nil, nil
	}
	m, err := s.store.StoredRecords(ctx, keys)
	if err != nil {
		return nil, toStatus(ctx, s.log, err)
	}
	out := storedRecords{}
	for j, i := range at {
		if vs, ok := m[keys[j]]; ok {
			out[i] = vs
		}
	}
	return out, nil
}

// answer is the check-mode verdict of record i when its key is stored: the verdict
// stored with the version of the same content, marked replayed and with a notice saying
// when it was recorded; or, for other content under a stored key, the check with the
// conflict (a stored record is changed by CorrectShipment). false: the key is not stored.
func (k storedRecords) answer(i int, env *validate.Env, r *validate.Record) (*halovetv1.Verdict, bool) {
	vs, ok := k[i]
	if !ok || len(vs) == 0 {
		return nil, false
	}
	fp := validate.Fingerprint(r)
	if ref := matchingRef(vs, fp); ref != nil {
		v, err := storedVerdict(ref.Verdict)
		if err != nil || v == nil {
			cv := validate.Check(env, r, nil)
			cv.Draws = nil
			v = verdictToProto(&cv)
		}
		v.RecordKey, v.SourceLine = r.Key, r.Line
		v.Recorded, v.Replayed = true, true
		withStored(v, ref)
		v.Findings = append(v.Findings, &halovetv1.Finding{Code: validate.CodeDupReplay, Severity: halovetv1.Severity_SEVERITY_NOTICE,
			Message: fmt.Sprintf("recorded already (version %d, %s; shipment_id and recorded_at say which and when); its draws are in the balance and not counted again",
				ref.Version, ref.State)})
		return v, true
	}
	cur := vs[len(vs)-1]
	cv := validate.Check(env, r, nil)
	cv.Add(findingFor(validate.CodeDupKeyConflict, "", fmt.Sprintf(
		"the key is recorded already (%s) with different content; a recorded shipment is changed by CorrectShipment ('halovet shipments correct'), a new record needs a new key",
		cur.State)))
	v := verdictToProto(&cv)
	withStored(v, &cur)
	return v, true
}
