// How the UI writes a moment (renderer/format.ts `when`): the bench's local time with its zone, dates
// year-month-day. Zone offsets from the IANA time zone database (Europe/Berlin: UTC+1 in winter, UTC+2 in
// summer; America/New_York: UTC−4 in summer; Asia/Kolkata: UTC+5:30), as Node's Intl reports them.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { when } from '../../renderer/format';

describe('when()', () => {
  it('writes local time with its zone, never a bare UTC time', () => {
    assert.equal(when('2026-03-17T19:30:00Z', 'UTC'), '2026-03-17 19:30 UTC');
    assert.equal(when('2026-03-17T19:30:00Z', 'Europe/Berlin'), '2026-03-17 20:30 GMT+1');
    assert.equal(when('2026-07-17T19:30:00Z', 'Europe/Berlin'), '2026-07-17 21:30 GMT+2');
    assert.equal(when('2026-07-17T19:30:00Z', 'America/New_York'), '2026-07-17 15:30 EDT');
    assert.equal(when('2026-03-17T19:30:00Z', 'Asia/Kolkata'), '2026-03-18 01:00 GMT+5:30');
  });

  it('uses 00–23 hours, and leaves text that is no time as it is', () => {
    assert.equal(when('2026-03-17T00:05:00Z', 'UTC'), '2026-03-17 00:05 UTC');
    assert.equal(when('not a time'), 'not a time');
  });
});
