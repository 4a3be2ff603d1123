// An independent BACnet/IP device for the collector/bacnet interop test,
// built on @bacnet-js/client. Usage: TZ=UTC node device.js PORT DEVICE_ID
// Serves Who-Is, ReadProperty, ReadPropertyMultiple and ReadRange (trend log 1,
// 30 records at one-minute steps from 2025-01-06 08:00 UTC, value = 20 + i/10).
'use strict';
const Bacnet = require('@bacnet-js/client').default;
const bac = require('@bacnet-js/client');
const asn1 = require('@bacnet-js/client/dist/lib/asn1');
const npdu = require('@bacnet-js/client/dist/lib/npdu');
const apdu = require('@bacnet-js/client/dist/lib/apdu');
const services = require('@bacnet-js/client/dist/lib/services');

const port = Number(process.argv[2]);
const deviceId = Number(process.argv[3]);
const T = bac.ObjectType, P = bac.PropertyIdentifier, A = bac.ApplicationTag;

const points = {
  [`${T.ANALOG_INPUT}:1`]: { name: 'VAV-7 DAT', units: bac.EngineeringUnits.DEGREES_FAHRENHEIT, value: 95.5 },
  [`${T.ANALOG_INPUT}:2`]: { name: 'VAV-7 Airflow', units: bac.EngineeringUnits.CUBIC_FEET_PER_MINUTE, value: 420 },
  [`${T.ANALOG_VALUE}:3`]: { name: 'VAV-7 HW Valve', units: bac.EngineeringUnits.PERCENT, value: 35 },
};
const t0 = Date.UTC(2025, 0, 6, 8, 0, 0);
const records = Array.from({ length: 30 }, (_, i) => ({ at: new Date(t0 + i * 60000), value: 20 + i / 10 }));

function props(type, instance) {
  const id = { type, instance };
  if (type === T.DEVICE && (instance === deviceId || instance === 4194303)) {
    return {
      [P.OBJECT_IDENTIFIER]: [{ type: A.OBJECTIDENTIFIER, value: { type: T.DEVICE, instance: deviceId } }],
      [P.OBJECT_NAME]: [{ type: A.CHARACTER_STRING, value: 'Interop Device' }],
      [P.OBJECT_TYPE]: [{ type: A.ENUMERATED, value: T.DEVICE }],
      [P.MAX_APDU_LENGTH_ACCEPTED]: [{ type: A.UNSIGNED_INTEGER, value: 1482 }],
      [P.SEGMENTATION_SUPPORTED]: [{ type: A.ENUMERATED, value: bac.Segmentation.NO_SEGMENTATION }],
      [P.OBJECT_LIST]: [
        { type: A.OBJECTIDENTIFIER, value: { type: T.DEVICE, instance: deviceId } },
        ...Object.keys(points).map((k) => { const [t, i] = k.split(':').map(Number); return { type: A.OBJECTIDENTIFIER, value: { type: t, instance: i } }; }),
        { type: A.OBJECTIDENTIFIER, value: { type: T.TREND_LOG, instance: 1 } },
      ],
    };
  }
  if (type === T.TREND_LOG && instance === 1) {
    return {
      [P.OBJECT_NAME]: [{ type: A.CHARACTER_STRING, value: 'VAV-7 DAT log' }],
      [P.RECORD_COUNT]: [{ type: A.UNSIGNED_INTEGER, value: records.length }],
      [P.TOTAL_RECORD_COUNT]: [{ type: A.UNSIGNED_INTEGER, value: records.length }],
      [P.BUFFER_SIZE]: [{ type: A.UNSIGNED_INTEGER, value: 1000 }],
    };
  }
  const p = points[`${type}:${instance}`];
  if (!p) return null;
  return {
    [P.OBJECT_IDENTIFIER]: [{ type: A.OBJECTIDENTIFIER, value: id }],
    [P.OBJECT_NAME]: [{ type: A.CHARACTER_STRING, value: p.name }],
    [P.PRESENT_VALUE]: [{ type: A.REAL, value: p.value }],
    [P.UNITS]: [{ type: A.ENUMERATED, value: p.units }],
    [P.STATUS_FLAGS]: [{ type: A.BIT_STRING, value: new bac.StatusFlagsBitString() }],
  };
}

const client = new Bacnet({ port, interface: '127.0.0.1', apduTimeout: 3000 });
client.on('error', (e) => { console.error('device error', e); });
client.on('whoIs', (msg) => {
  const p = msg.payload || {};
  if (p.lowLimit !== undefined && (deviceId < p.lowLimit || deviceId > p.highLimit)) return;
  client.iAmResponse(msg.header.sender, deviceId, bac.Segmentation.NO_SEGMENTATION, 999);
});
client.on('readProperty', (msg) => {
  const { objectId, property } = msg.payload;
  const all = props(objectId.type, objectId.instance);
  if (!all) return client.errorResponse(msg.header.sender, bac.ConfirmedServiceChoice.READ_PROPERTY, msg.invokeId, bac.ErrorClass.OBJECT, bac.ErrorCode.UNKNOWN_OBJECT);
  let v = all[property.id];
  if (!v) return client.errorResponse(msg.header.sender, bac.ConfirmedServiceChoice.READ_PROPERTY, msg.invokeId, bac.ErrorClass.PROPERTY, bac.ErrorCode.UNKNOWN_PROPERTY);
  if (property.index !== bac.ASN1_ARRAY_ALL) v = property.index === 0 ? [{ type: A.UNSIGNED_INTEGER, value: v.length }] : [v[property.index - 1]];
  client.readPropertyResponse(msg.header.sender, msg.invokeId, objectId, property, v);
});
client.on('readPropertyMultiple', (msg) => {
  const values = msg.payload.properties.map((spec) => {
    const all = props(spec.objectId.type, spec.objectId.instance);
    return {
      objectId: spec.objectId,
      values: spec.properties.map((pr) => {
        const v = all && all[pr.id];
        if (!v) return { property: pr, value: [{ value: { type: 'BacnetError', errorClass: all ? bac.ErrorClass.PROPERTY : bac.ErrorClass.OBJECT, errorCode: all ? bac.ErrorCode.UNKNOWN_PROPERTY : bac.ErrorCode.UNKNOWN_OBJECT } }] };
        return { property: pr, value: v };
      }),
    };
  });
  client.readPropertyMultipleResponse(msg.header.sender, msg.invokeId, values);
});
client.on('readRange', (msg) => {
  const q = msg.payload;
  // By sequence number (sequence i+1 is records[i]) or by position (same numbering here).
  let from = q.position - 1, to = from + q.count - 1;
  if (q.count < 0) { to = from; from = from + q.count + 1; }
  from = Math.max(0, from); to = Math.min(records.length - 1, to);
  const sel = from <= to && q.position >= 1 && q.position <= records.length ? records.slice(from, to + 1) : [];
  const data = { buffer: Buffer.alloc(1400), offset: 0 };
  for (const r of sel) {
    asn1.encodeOpeningTag(data, 0);
    asn1.encodeApplicationDate(data, r.at);
    asn1.encodeApplicationTime(data, r.at);
    asn1.encodeClosingTag(data, 0);
    asn1.encodeOpeningTag(data, 1);
    asn1.encodeContextReal(data, 2, r.value);
    asn1.encodeClosingTag(data, 1);
    asn1.encodeContextBitstring(data, 2, new bac.StatusFlagsBitString());
  }
  const flags = new bac.GenericBitString(3, [sel.length && from === 0 ? 0 : -1, sel.length && to === records.length - 1 ? 1 : -1].filter((b) => b >= 0));
  const buf = client._getApduBuffer(msg.header.sender);
  npdu.encode(buf, bac.NpduControlPriority.NORMAL_MESSAGE, msg.header.sender);
  apdu.encodeComplexAck(buf, bac.PduType.COMPLEX_ACK, bac.ConfirmedServiceChoice.READ_RANGE, msg.invokeId);
  services.ReadRange.encodeAcknowledge(buf, q.objectId, q.property.id, q.property.index, flags, sel.length,
    data.buffer.subarray(0, data.offset), q.requestType, from + 1);
  client.sendBvlc(msg.header.sender, buf);
});
client.on('listening', () => { console.log('listening'); });
