// Checks one shipment record with halovet's gRPC API (ShipmentService.CheckShipment), then
// sends a request the server refuses and decodes the error's details (the
// google.rpc.Status in the grpc-status-details-bin trailer: BadRequest field violations,
// ErrorInfo). Prints one JSON object per line: {"verdict": ...}, then {"error": ...}.
//
//   HALOVET_SERVER=127.0.0.1:7390 node check.js
//
// The record is one of the invented demo scenario's (testdata/demo): load the scenario
// first ('halovet load testdata/demo/scenario.json').
'use strict';

const path = require('node:path');
const grpc = require('@grpc/grpc-js');
const protoLoader = require('@grpc/proto-loader');
const protobuf = require('protobufjs');

const repo = path.resolve(__dirname, '..', '..');
const server = process.env.HALOVET_SERVER || '127.0.0.1:7390';

// The API's .proto files, read at run time (the google.api annotations they import are in
// third_party/googleapis). Field names as written in the .proto, enums as their names.
const definition = protoLoader.loadSync('halovet/v1/shipment.proto', {
  includeDirs: [path.join(repo, 'proto'), path.join(repo, 'third_party', 'googleapis')],
  keepCase: true,
  enums: String,
  longs: String,
  defaults: true,
  oneofs: true,
});
const api = grpc.loadPackageDefinition(definition).halovet.v1;
const client = new api.ShipmentService(server, grpc.credentials.createInsecure());

// The error model, for decoding the details of a refused call.
const rpc = protobuf.loadSync(path.join(__dirname, 'rpc_status.proto'));
const Status = rpc.lookupType('google.rpc.Status');

function decodeDetails(err) {
  const raw = err.metadata && err.metadata.get('grpc-status-details-bin')[0];
  if (!raw) {
    return { code: err.code, message: err.details, details: [] };
  }
  const st = Status.decode(raw);
  const details = st.details.map((any) => {
    const name = any.type_url.slice(any.type_url.lastIndexOf('/') + 1);
    let type;
    try {
      type = rpc.lookupType(name);
    } catch {
      return { type: name, undecoded: true };
    }
    return { type: name, ...type.toObject(type.decode(any.value), { longs: String, defaults: true }) };
  });
  return { code: st.code, message: st.message, details };
}

function call(method, request) {
  const deadline = new Date(Date.now() + 10000);
  return new Promise((resolve, reject) => {
    client[method](request, { deadline }, (err, resp) => (err ? reject(err) : resolve(resp)));
  });
}

async function main() {
  const record = {
    record_key: 'CHC-26-0002',
    direction: 'DIRECTION_IMPORT',
    company_id: 'XA-1002',
    licence_number: 'XA-IMP-2026-002',
    partner_country: 'XC',
    declaration_date: '2026-01-05',
    substance: 'HCFC-22',
    total_net_quantity: '0.7',
    quantity_unit: 't',
    purpose: 'PURPOSE_SERVICING',
  };
  const resp = await call('CheckShipment', { record });
  console.log(JSON.stringify({ verdict: resp.verdict }));

  // No record at all: INVALID_ARGUMENT, with a BadRequest naming the field.
  try {
    await call('CheckShipment', {});
    throw new Error('a check without a record was answered');
  } catch (err) {
    if (err.code === undefined) {
      throw err;
    }
    console.log(JSON.stringify({ error: { grpc_code: grpc.status[err.code], ...decodeDetails(err) } }));
  }
}

main()
  .then(() => client.close())
  .catch((err) => {
    console.error(`check.js: ${err.message || err}`);
    client.close();
    process.exit(1);
  });
