/**
 * The JSON text of the last `capacity` genomes a variation made, by hash. A genome read back from
 * the store or a job is JSON-equal to the one that was made, so an observation's claimed hash can
 * be confirmed by comparing texts instead of hashing the genome again; a genome not held here, or
 * not JSON-equal (keys in another order, a changed value), is simply hashed.
 */
export class RecentGenomes {
  private readonly texts = new Map<string, string>();

  constructor(private readonly capacity = 4096) {}

  remember(hash: string, genome: unknown): void {
    this.texts.delete(hash);
    this.texts.set(hash, JSON.stringify(genome));
    // A Map iterates in insertion order: the first key is the oldest.
    if (this.texts.size > this.capacity) this.texts.delete(this.texts.keys().next().value!);
  }

  /** True when a genome made here had this hash and the same JSON text as `genome`. */
  madeWith(hash: string, genome: unknown): boolean {
    const text = this.texts.get(hash);
    return text !== undefined && text === JSON.stringify(genome);
  }
}
