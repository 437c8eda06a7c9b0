/** The `Authorization` header that carries a coordinator token, or none. */
export const authHeader = (token: string | null): Record<string, string> => (token ? { authorization: `Bearer ${token}` } : {});
