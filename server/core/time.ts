export const nowIso = () => new Date().toISOString()
export const isoIn = (ms: number) => new Date(Date.now() + ms).toISOString()
