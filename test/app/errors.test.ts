// Runs in Node (tests app/, which is runtime-free). One error vocabulary: how every loop classes a code, and
// the field that travels beside the message across a process boundary.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError, errorClass, errorText, toFailure } from '../../app/errors';

describe('errorClass()', () => {
  it('goes on after a missed exchange, reconnects after a broken link, and stops on the rest', () => {
    assert.equal(errorClass('ETIMEOUT'), 'transient');
    assert.equal(errorClass('EPROTO'), 'transient');
    assert.equal(errorClass('EIO'), 'link-down');
    for (const c of ['EINVAL', 'ENOTFOUND', 'EREJECTED', 'ENAVAIL', 'EUNSAFE', 'ECONFLICT', 'EWHATEVER'])
      assert.equal(errorClass(c), 'permanent', c);
  });
});

describe('BenchError across a boundary', () => {
  it('comes back with its code and field, the field said once', () => {
    const e = new BenchError('EINVAL', 'must be at least 0 dB', 'path[1].db');
    const f = toFailure(e);
    assert.equal(f.code, 'EINVAL');
    assert.equal(f.field, 'path[1].db');
    const back = BenchError.fromFailure(f);
    assert.equal(back.code, 'EINVAL');
    assert.equal(back.field, 'path[1].db');
    assert.equal(errorText(back), 'path[1].db: must be at least 0 dB');
    assert.equal(errorText(f), 'path[1].db: must be at least 0 dB');
    assert.equal(BenchError.fromFailure({ code: 'ENOPE', message: 'x' }).code, 'EIO');
    assert.equal(toFailure(new Error('disk full')).code, 'EIO');
  });
});
