// Runs in Node. How a reading's stable id (uid) is kept on disk (schema 6): a UUID in its canonical text
// (lower-case hex, the form the store makes) as its 16 bytes, any other id a bundle brought as its text, so
// every id reads back exactly as it was written. migrations/006_compact_readings.sql converts the same way.

const CANONICAL = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/;

/** The value stored in readings.uid for a stable id. */
export function uidToDb(uid: string): Buffer | string {
  return CANONICAL.test(uid) ? Buffer.from(uid.replace(/-/g, ''), 'hex') : uid;
}

/** The stable id a readings.uid value stands for. */
export function uidFromDb(v: Buffer | Uint8Array | string): string {
  if (typeof v === 'string') return v;
  const h = Buffer.from(v).toString('hex');
  if (h.length !== 32) throw new Error(`a stored reading id of ${v.length} bytes (16 expected)`);
  return `${h.slice(0, 8)}-${h.slice(8, 12)}-${h.slice(12, 16)}-${h.slice(16, 20)}-${h.slice(20)}`;
}
