/**
 * `--promote-if-better` after a run: apply the promotion rule against the current champion,
 * move the pointer when the rule says so, and record the decision in the run's own log.jsonl
 * (the run folder is already finished, so the line is appended) and in the returned decision.
 */
import { join } from 'node:path';
import { pino, type DestinationStream } from 'pino';
import type { PromoteConfig } from '../config/types.js';
import { readChampionRun, writeChampion } from './champion.js';
import { decidePromotion, type PromotionDecision } from './promotion.js';
import { readHoldout, readRun } from './read.js';

export interface AutoPromoteOptions {
  /** Also log there (e.g. stdout when it is not a terminal), as the run does. */
  readonly logStream?: DestinationStream;
  readonly now?: Date;
}

export async function promoteIfBetter(runDir: string, runsDir: string, rule: PromoteConfig, opts: AutoPromoteOptions = {}): Promise<PromotionDecision> {
  const run = readRun(runDir);
  const championRun = readChampionRun(runsDir, run.manifest.name);
  const challenger = { run, holdout: await readHoldout(run) };
  const champion = championRun ? { run: championRun, holdout: await readHoldout(championRun) } : null;
  const decision = decidePromotion(challenger, champion, rule);
  if (decision.promote) writeChampion(runsDir, run, `--promote-if-better: ${decision.reason}`, opts.now);
  const fileLog = pino.destination({ dest: join(runDir, 'log.jsonl'), append: true, sync: true });
  const streams: { stream: DestinationStream }[] = [{ stream: fileLog }];
  if (opts.logStream) streams.push({ stream: opts.logStream });
  const log = pino({ base: { run: run.id } }, pino.multistream(streams));
  log.info({ promotion: { ...decision, rule } }, decision.promote ? 'promoted to champion' : 'not promoted');
  fileLog.flushSync();
  fileLog.end();
  return decision;
}
