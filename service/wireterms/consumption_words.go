package wireterms

import halovetv1 "github.com/halovet/halovet/proto/halovet/v1"

// The words a person reads for the consumption enums, shared by the command line's text
// and CSV and by the console.

// ControlUnitText names a control scope's unit: "ODP t" or "CO2-eq t"; "" when unspecified.
func ControlUnitText(u halovetv1.ControlUnit) string {
	switch u {
	case halovetv1.ControlUnit_CONTROL_UNIT_ODP_TONNES:
		return "ODP t"
	case halovetv1.ControlUnit_CONTROL_UNIT_CO2E_TONNES:
		return "CO2-eq t"
	}
	return ""
}

// ControlScheduleText names the control schedule a Party follows ("A5", "non-A5",
// "non-A5-variant", "A5-group1", "A5-group2"); "unknown" when unspecified.
func ControlScheduleText(s halovetv1.ControlSchedule) string {
	switch s {
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_NON_ARTICLE_5:
		return "non-A5"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5:
		return "A5"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_NON_ARTICLE_5_HFC_LATER_START:
		return "non-A5-variant"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5_HFC_FIRST_GROUP:
		return "A5-group1"
	case halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5_HFC_SECOND_GROUP:
		return "A5-group2"
	}
	return "unknown"
}

// ReportStateText is "provisional" or "closed"; the enum's own name otherwise.
func ReportStateText(s halovetv1.ReportState) string {
	switch s {
	case halovetv1.ReportState_REPORT_STATE_PROVISIONAL:
		return "provisional"
	case halovetv1.ReportState_REPORT_STATE_CLOSED:
		return "closed"
	}
	return s.String()
}
