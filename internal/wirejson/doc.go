// Package wirejson writes and reads halovet's one JSON dialect for the messages of the
// wire API: every --output json of the command line, the JSON Lines of lookup and check
// --report, the report.json of halovet year-report --dir, and the console's JSON
// downloads. The same message gives the same bytes wherever it is written.
//
// The dialect:
//   - keys are snake_case, the .proto field names, which are also the CSV column names;
//   - every field is present, zeros included (0, false, "", []); only a message-typed
//     field that is not set, or an optional scalar that is not set, is left out;
//   - enums are lower-case words joined by hyphens, without the type's prefix
//     (QUOTA_UNIT_CO2E_TONNES is "co2e-tonnes", OUTCOME_ACCEPTED_WITH_WARNINGS is
//     "accepted-with-warnings", REPORT_STATE_PROVISIONAL is "provisional");
//   - integers of every size are JSON numbers; doubles are decimals rounded to 12
//     significant digits and written without trailing zeros (decimalText), so binary
//     floating-point noise such as 0.8999999999999986 reads 0.9;
//   - fields come in .proto order, map entries by key; a document is indented by two
//     spaces; a JSON Lines record is one line.
//
// Unmarshal reads the dialect back (and protobuf JSON as well).
package wirejson
