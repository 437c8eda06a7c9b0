/**
 * The ACL rules of a worker's Redis user, as docs/operating.md documents them (keep the two in step):
 * keys and channels under the search's prefix only; the command groups BullMQ's worker uses
 * (reading and writing its keys, its Lua scripts, blocking pops, streams for events, pub/sub),
 * INFO (BullMQ checks the server version) and CLIENT (it names its connections); nothing else.
 */
export function workerAclRules(prefix: string, password: string): string[] {
  return [
    'reset',
    'on',
    `>${password}`,
    `~${prefix}:*`,
    `&${prefix}:*`,
    '+@read',
    '+@write',
    '+@list',
    '+@sortedset',
    '+@hash',
    '+@string',
    '+@set',
    '+@stream',
    '+@scripting',
    '+@transaction',
    '+@connection',
    '+@pubsub',
    '+@blocking',
    '-@dangerous',
    '+info',
    '+client|setname',
    '+client|getname',
    '+client|id',
    '+client|info',
  ];
}
