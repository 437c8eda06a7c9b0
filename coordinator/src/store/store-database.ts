import Database from 'better-sqlite3';
import { MIGRATIONS } from './migrations.js';
import { num, type Row } from './row.js';
import { WalCheckpointer, type WalCheckpointerOptions } from './wal-checkpointer.js';
import { InternalError } from '@netbreeder/shared-types';

/** SQLite's own `wal_autocheckpoint`, in pages. */
const SQLITE_DEFAULT_AUTOCHECKPOINT = 1000;

export interface StoreDatabaseOptions {
  /**
   * Checkpoint the write-ahead log on a thread of its own ({@link WalCheckpointer}) instead of
   * inside the commits on this one. Should that thread fail, this connection checkpoints again as
   * SQLite does by default, and `onFailure` is told. Only for a store in a file.
   */
  backgroundCheckpoints?: Omit<WalCheckpointerOptions, 'onFailure'> & { onFailure?: (err: Error) => void };
  /**
   * Page cache in MiB (SQLite's default is 2): a store of a million results keeps its indexes'
   * upper levels in memory. @default 64
   */
  cacheMb?: number;
}

/**
 * The store's SQLite connection (better-sqlite3, synchronous, WAL): its settings, the migrations,
 * the prepared statements (each prepared once), transactions and the write-ahead log's checkpoint
 * thread. The table modules (./runs-table.ts and its siblings) run their SQL through it.
 */
export class StoreDatabase {
  private readonly db: Database.Database;
  /** Prepared statements by SQL text: preparing costs more than running a small statement. */
  private readonly statements = new Map<string, Database.Statement>();
  private checkpointer: WalCheckpointer | null = null;
  /** Writes a table module holds back (taken heartbeats), written before any statement runs. */
  private heldWrites: (() => void) | null = null;

  constructor(path: string, options: StoreDatabaseOptions = {}) {
    this.db = new Database(path);
    this.db.pragma('journal_mode = WAL');
    this.db.pragma('synchronous = NORMAL');
    this.db.pragma('foreign_keys = ON');
    this.db.pragma('busy_timeout = 5000');
    this.db.pragma(`cache_size = -${Math.round((options.cacheMb ?? 64) * 1024)}`);
    this.migrate();
    const background = options.backgroundCheckpoints;
    if (background && path !== ':memory:') {
      this.db.pragma('wal_autocheckpoint = 0');
      // The log file shrinks back to 64 MiB when it restarts after a burst (a bulk import).
      this.db.pragma('journal_size_limit = 67108864');
      this.checkpointer = WalCheckpointer.start(path, {
        ...background,
        onFailure: (err) => {
          this.checkpointer = null;
          if (this.db.open) this.db.pragma(`wal_autocheckpoint = ${SQLITE_DEFAULT_AUTOCHECKPOINT}`);
          background.onFailure?.(err);
        },
      });
    }
  }

  private migrate(): void {
    const version = this.db.pragma('user_version', { simple: true }) as number;
    for (let i = version; i < MIGRATIONS.length; i++) {
      this.db.transaction(() => {
        this.db.exec(MIGRATIONS[i]!);
        this.db.pragma(`user_version = ${i + 1}`);
      })();
    }
  }

  /**
   * Has `write` called before any statement, transaction or close of this connection, so every
   * read sees writes a table module holds back (./workers-table.ts: taken heartbeats). One holder.
   */
  holdWrites(write: () => void): void {
    if (this.heldWrites) throw new InternalError('the store already has a holder of held-back writes');
    this.heldWrites = write;
  }

  /** The prepared statement for `sql`, prepared once per connection; held-back writes are written first. */
  statement(sql: string): Database.Statement {
    this.heldWrites?.();
    let statement = this.statements.get(sql);
    if (!statement) {
      statement = this.db.prepare(sql);
      this.statements.set(sql, statement);
    }
    return statement;
  }

  /** The first row `sql` returns, or undefined. */
  get(sql: string, ...params: unknown[]): Row | undefined {
    return this.statement(sql).get(...params) as Row | undefined;
  }

  /** Every row `sql` returns. */
  all(sql: string, ...params: unknown[]): Row[] {
    return this.statement(sql).all(...params) as Row[];
  }

  /** Runs a statement that writes; returns how many rows it changed. */
  run(sql: string, ...params: unknown[]): number {
    return this.statement(sql).run(...params).changes;
  }

  /** The number a `SELECT … AS n` query returns. */
  count(sql: string, ...params: unknown[]): number {
    return num(this.get(sql, ...params) ?? {}, 'n');
  }

  /**
   * Runs `fn` in one transaction: all of its writes land, or none (held-back writes are written
   * before, on their own). It takes the write lock when it begins (BEGIN IMMEDIATE), waiting up to
   * the busy timeout for it: a deferred transaction that reads first and writes later fails at
   * once with "database is locked" when another connection (the checkpoint thread's RESTART)
   * writes in between, as SQLite cannot wait for the lock inside a read.
   */
  transaction<T>(fn: () => T): T {
    this.heldWrites?.();
    return this.db.transaction(fn).immediate();
  }

  close(): void {
    this.heldWrites?.();
    this.checkpointer?.stop();
    this.checkpointer = null;
    this.db.close();
  }
}
