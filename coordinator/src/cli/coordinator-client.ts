import {
  championFilesReplyValidator,
  championPickResponseValidator,
  ensembleRequestResponseValidator,
  errorReplyValidator,
  isErrorCode,
  NetbreederError,
  runControlReplyValidator,
  runListValidator,
  type ChampionFilesReply,
  type ChampionPickResponse,
  type EnsembleRequestResponse,
  type RunControlReply,
  type RunList,
  type Validator,
} from '@netbreeder/shared-types';
import type { TSchema } from '@sinclair/typebox';

/**
 * The coordinator refused a request; the message holds its HTTP status, its error code and its
 * one-line fix. `code` is the coordinator's code when it is one of the catalogue, else
 * NB_COORDINATOR_REFUSED (a proxy's page, or a coordinator of another version); `replyCode` is the
 * code the reply named, if any.
 */
export class CoordinatorRefusal extends NetbreederError {
  constructor(
    readonly what: string,
    status: number,
    readonly replyCode: string | null,
    reason: string,
    fix: string | null,
  ) {
    super(isErrorCode(replyCode) ? replyCode : 'NB_COORDINATOR_REFUSED', `${what} refused (${status}${replyCode ? ` ${replyCode}` : ''}): ${reason}${fix ? `; ${fix}` : ''}`);
  }
}

/**
 * The one way the command line talks to a coordinator: every reply it reads is checked against
 * its schema in shared-types (a reply that does not match says so, naming the field), and every
 * refusal becomes a {@link CoordinatorRefusal} with the coordinator's own message and fix.
 */
export class CoordinatorClient {
  private readonly headers: Record<string, string>;

  constructor(
    readonly url: string,
    token: string | null | undefined,
  ) {
    this.headers = token ? { authorization: `Bearer ${token}` } : {};
  }

  /** GET /runs */
  runs(): Promise<RunList> {
    return this.call('list runs', 'GET', '/runs', runListValidator);
  }

  /** POST /runs/:id/{pause,resume,stop,finish} */
  control(runId: string, action: 'pause' | 'resume' | 'stop' | 'finish'): Promise<RunControlReply> {
    return this.call(action, 'POST', `/runs/${encodeURIComponent(runId)}/${action}`, runControlReplyValidator);
  }

  /** GET /runs/:id/champion, the files part. */
  champion(runId: string): Promise<ChampionFilesReply> {
    return this.call(`champion of run ${runId}`, 'GET', `/runs/${encodeURIComponent(runId)}/champion`, championFilesReplyValidator);
  }

  /** POST /runs/:id/champion/pick */
  pick(runId: string, genomeHash: string): Promise<ChampionPickResponse> {
    return this.call('pick', 'POST', `/runs/${encodeURIComponent(runId)}/champion/pick`, championPickResponseValidator, { genomeHash });
  }

  /** POST /runs/:id/ensemble (answered 202: it is trained in the background). */
  requestEnsemble(runId: string, settings: { size: number; diversityPenalty?: number }): Promise<EnsembleRequestResponse> {
    return this.call('ensemble', 'POST', `/runs/${encodeURIComponent(runId)}/ensemble`, ensembleRequestResponseValidator, settings);
  }

  /** The bytes of a file under `path` (an export's file). */
  async file(path: string): Promise<Buffer> {
    const res = await fetch(new URL(path, this.url), { headers: this.headers });
    if (!res.ok) throw await this.refusal(`download ${path}`, res);
    return Buffer.from(await res.arrayBuffer());
  }

  private async call<S extends TSchema>(what: string, method: 'GET' | 'POST', path: string, validator: Validator<S>, body?: unknown): Promise<ReturnType<Validator<S>['parse']>> {
    const res = await fetch(new URL(path, this.url), {
      method,
      headers: body === undefined ? this.headers : { ...this.headers, 'content-type': 'application/json' },
      ...(body === undefined ? {} : { body: JSON.stringify(body) }),
    });
    if (!res.ok) throw await this.refusal(what, res);
    return validator.parse(await res.json());
  }

  private async refusal(what: string, res: Response): Promise<CoordinatorRefusal> {
    const text = await res.text();
    let parsed: unknown = null;
    try {
      parsed = JSON.parse(text);
    } catch {
      // not JSON: a proxy's page, say; its text is the reason
    }
    if (errorReplyValidator.check(parsed)) return new CoordinatorRefusal(what, res.status, parsed.error.code, parsed.error.message, parsed.error.fix);
    const hint = res.status === 401 ? 'pass the admin token with --admin-token or NETBREEDER_ADMIN_TOKEN' : null;
    return new CoordinatorRefusal(what, res.status, null, text.slice(0, 300) || res.statusText, hint);
  }
}
