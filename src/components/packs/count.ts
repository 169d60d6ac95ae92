/** "1 download", "2 downloads": a count with its noun, pluralised the plain English way. */
export function count(n: number, noun: string, plural = `${noun}s`): string {
  return `${n} ${n === 1 ? noun : plural}`
}
