import path from 'node:path'
import type { FileMetadata } from '@shared/schemas/analysis'

/**
 * Title, description and notes from what the recorder already wrote into the
 * file, so takes a recorder labelled are not typed again. Order of preference
 * (common practice): INFO title, iXML scene/take, the first line of the bext
 * description, then the file name.
 */
export function prefillFromMetadata(meta: FileMetadata | null, filename: string) {
  const base = path.basename(filename).replace(/\.(wav|wave|bwf|rf64)$/i, '')
  const ixml = meta?.ixml
  const sceneTake = [ixml?.scene && `Scene ${ixml.scene}`, ixml?.take && `take ${ixml.take}`].filter(Boolean).join(', ')
  const bextFirst = meta?.bext?.description?.split(/\r?\n/)[0]?.trim() ?? ''
  const title = (meta?.info.INAM?.trim() || sceneTake || bextFirst.slice(0, 120) || base).slice(0, 200)
  const notes = [ixml?.note, meta?.info.ICMT]
    .map((s) => s?.trim())
    .filter(Boolean)
    .join('\n')
  return { title, description: meta?.bext?.description?.trim() ?? '', notes }
}
