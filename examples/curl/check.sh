#!/bin/sh
# Checks one shipment record over halovet's HTTP/JSON API (POST /v1/shipments:check), then
# sends a request the server refuses and shows the error: the HTTP status of its gRPC code
# and the google.rpc.Status body, details included (a BadRequest naming the field).
#
#   HALOVET_HTTP=http://127.0.0.1:7391 sh examples/curl/check.sh
#
# The record is one of the invented demo scenario's (testdata/demo): load the scenario
# first ('halovet load testdata/demo/scenario.json'). Prints the verdict's JSON on one
# line, then the error's JSON and "HTTP <status>" on the next two.
set -eu
base=${HALOVET_HTTP:-http://127.0.0.1:7391}

curl -sS --fail-with-body -X POST "$base/v1/shipments:check" \
  -H 'Content-Type: application/json' \
  --data-binary @- <<'JSON'
{"record": {
  "record_key": "CHC-26-0002",
  "direction": "DIRECTION_IMPORT",
  "company_id": "XA-1002",
  "licence_number": "XA-IMP-2026-002",
  "partner_country": "XC",
  "declaration_date": "2026-01-05",
  "substance": "HCFC-22",
  "total_net_quantity": "0.7",
  "quantity_unit": "t",
  "purpose": "PURPOSE_SERVICING"
}}
JSON
echo

# No record at all: 400 (INVALID_ARGUMENT) with the field violation in the details.
curl -sS -X POST "$base/v1/shipments:check" -H 'Content-Type: application/json' \
  -d '{}' -w '\nHTTP %{http_code}\n'
