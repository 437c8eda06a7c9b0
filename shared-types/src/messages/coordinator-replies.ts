import { Type, type Static } from '@sinclair/typebox';
import { createValidator } from '../validation.js';

/**
 * The coordinator's HTTP replies the command line reads, one schema each, so the CLI checks what
 * it is told instead of trusting casts. (The status, the pick and the ensemble request have their
 * own schemas beside their routes.)
 */

/** Every refusal: `{ error: { code, message, fix } }`, sometimes with more fields beside them. */
export const ErrorReplySchema = Type.Object(
  { error: Type.Object({ code: Type.String({ pattern: '^NB_[A-Z_]+$' }), message: Type.String(), fix: Type.String() }) },
);
export type ErrorReply = Static<typeof ErrorReplySchema>;
export const errorReplyValidator = createValidator('error reply', ErrorReplySchema);

const RunState = Type.String({ minLength: 1, maxLength: 40 });

/** GET /runs: every run the coordinator's store holds, oldest first. */
export const RunListSchema = Type.Array(
  Type.Object({ id: Type.String(), name: Type.String(), state: RunState, createdAt: Type.String({ format: 'date-time' }), proposals: Type.Integer({ minimum: 0 }) }, { additionalProperties: false }),
);
export type RunList = Static<typeof RunListSchema>;
export const runListValidator = createValidator('run list', RunListSchema);

/** POST /runs/:id/pause|resume|stop|finish: the run's state after the control. */
export const RunControlReplySchema = Type.Object({ id: Type.String(), state: RunState }, { additionalProperties: false });
export type RunControlReply = Static<typeof RunControlReplySchema>;
export const runControlReplyValidator = createValidator('run control reply', RunControlReplySchema);

/**
 * GET /runs/:id/champion, the part the CLI reads: the files of the export, and the ensemble's
 * files and round when the run has one. The reply holds much more (champion.json); those fields
 * are allowed through unchecked here.
 */
export const ChampionFilesReplySchema = Type.Object({
  files: Type.Array(Type.String({ minLength: 1 })),
  ensemble: Type.Optional(Type.Union([Type.Null(), Type.Object({ round: Type.Optional(Type.Integer({ minimum: 0 })), files: Type.Array(Type.String({ minLength: 1 })) })])),
});
export type ChampionFilesReply = Static<typeof ChampionFilesReplySchema>;
export const championFilesReplyValidator = createValidator('champion summary', ChampionFilesReplySchema);
