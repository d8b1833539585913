import type { Adapter, AdapterPayload } from 'oidc-provider';

interface Entry {
  payload: AdapterPayload;
  expiresAt: number;
}

/**
 * Keeps the local identity provider's grants, codes and sessions in memory. A fake needs
 * nothing more; saying so explicitly also keeps oidc-provider from warning at every start.
 */
export function memoryAdapterFactory(): (model: string) => Adapter {
  const entries = new Map<string, Entry>();
  const grantMembers = new Map<string, Set<string>>();
  const read = (key: string): AdapterPayload | undefined => {
    const entry = entries.get(key);
    if (!entry) return undefined;
    if (entry.expiresAt < Date.now()) {
      entries.delete(key);
      return undefined;
    }
    return entry.payload;
  };
  const scan = (predicate: (payload: AdapterPayload) => boolean, model: string) => {
    for (const [key, entry] of entries) {
      if (key.startsWith(`${model}:`) && predicate(entry.payload)) return read(key);
    }
    return undefined;
  };

  return (model) => ({
    async upsert(id, payload, expiresIn) {
      const key = `${model}:${id}`;
      entries.set(key, { payload, expiresAt: expiresIn ? Date.now() + expiresIn * 1000 : Number.POSITIVE_INFINITY });
      if (payload.grantId) {
        const members = grantMembers.get(payload.grantId) ?? new Set<string>();
        members.add(key);
        grantMembers.set(payload.grantId, members);
      }
    },
    async find(id) {
      return read(`${model}:${id}`);
    },
    async findByUid(uid) {
      return scan((payload) => payload.uid === uid, model);
    },
    async findByUserCode(userCode) {
      return scan((payload) => payload.userCode === userCode, model);
    },
    async consume(id) {
      const entry = entries.get(`${model}:${id}`);
      if (entry) entry.payload = { ...entry.payload, consumed: Math.floor(Date.now() / 1000) };
    },
    async destroy(id) {
      entries.delete(`${model}:${id}`);
    },
    async revokeByGrantId(grantId) {
      for (const key of grantMembers.get(grantId) ?? []) entries.delete(key);
      grantMembers.delete(grantId);
    },
  });
}
