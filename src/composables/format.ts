// Numbers to one decimal with their unit, and dates, the same everywhere.
export function db(value: number | null | undefined, unit: 'LUFS' | 'LU' | 'dBTP' | 'dBFS' | 'dB'): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—'
  return `${value.toFixed(1).replace('-', '−')} ${unit}`
}

export function hz(value: number | null | undefined): string {
  if (value === null || value === undefined) return '—'
  return value >= 1000 ? `${(value / 1000).toFixed(1)} kHz` : `${value.toFixed(1)} Hz`
}

export function seconds(value: number | null | undefined): string {
  if (value === null || value === undefined) return '—'
  if (value < 60) return `${value.toFixed(1)} s`
  const m = Math.floor(value / 60)
  const s = value - m * 60
  return `${m}:${s.toFixed(1).padStart(4, '0')}`
}

export function bytes(n: number): string {
  if (n < 1024) return `${n} B`
  const units = ['KB', 'MB', 'GB', 'TB']
  let v = n / 1024
  let i = 0
  while (v >= 1024 && i < units.length - 1) {
    v /= 1024
    i++
  }
  return `${v.toFixed(1)} ${units[i]}`
}

export function formatDate(iso: string): string {
  const d = new Date(iso)
  return d.toLocaleString(undefined, {
    year: 'numeric',
    month: 'short',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
  })
}
