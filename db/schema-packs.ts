// Tables of sample packs: packs, items, builds, followers and share links.
// eslint-disable-next-line @typescript-eslint/no-empty-object-type
export interface PackTables {}
