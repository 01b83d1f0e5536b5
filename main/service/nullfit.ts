// Runs in Node. The service's handlers for the null navigator's calls (app/api/nullcalls): gathers a
// session's kept readings from the store and, when the session is open, where the trimmers stand and the
// receiver's floor; the fitting and the guidance themselves are app/nullfit/align.
import type { z } from 'zod';
import { NULL_CALLS, type NullCallResults } from '../../app/api/nullfit';
import { BenchError } from '../../app/errors';
import { fitSession, guideSession, trimStep, type AlignOptions } from '../../app/nullfit/align';
import { meterUDb } from '../../app/nullfit/guide';
import type { GroupHandlers, ServiceContext } from './handlers';

export class NullfitCalls {
  constructor(private readonly ctx: ServiceContext) {}

  handlers(): GroupHandlers<keyof NullCallResults> {
    const { store, live } = this.ctx;
    const gather = (a: z.output<typeof NULL_CALLS.nullFit>) => {
      const l = live();
      const sessionId = a.sessionId ?? l?.session.id;
      if (!sessionId)
        throw new BenchError(
          'ECONFLICT',
          'no session is open: open one, or name it with sessionId',
          'sessionId',
        );
      const session = store.getSession(sessionId);
      session.trims.forEach((t, i) => trimStep(t, `session.trims[${i}]`));
      const open = l && l.session.id === sessionId ? l : null;
      const kept = store.readings(sessionId, { keptOnly: true }).filter((r) => r.role === 'carrier');
      // Where the trimmers stand: as the open bench knows them, else as the latest kept reading had them.
      const current = open ? open.trims : kept[kept.length - 1]?.trims;
      // The receiver's own floor, referred to the transmitter output through the session's path.
      const noise = open?.source.noiseFloorDbm;
      const floorDbm = open && noise !== undefined ? noise + open.corrector.pathLossDb : null;
      const opts: AlignOptions = {
        keys: a.trims ?? session.trims.slice(0, 2).map((t) => t.key),
        at: a.at,
        current,
        sinceId: a.sinceId,
        floorDbm,
        // Unless the caller says otherwise, the meter's own step sets how far one reading can be trusted.
        uDb: a.uDb ?? meterUDb(open?.source.meterStepDb),
        meterStepDb: open?.source.meterStepDb,
      };
      return { trims: session.trims, kept, opts };
    };
    return {
      nullFit: (a) => {
        const g = gather(a);
        return fitSession(g.kept, g.trims, g.opts);
      },
      nextTrial: (a) => {
        const g = gather(a);
        return guideSession(g.kept, g.trims, g.opts);
      },
    };
  }
}
