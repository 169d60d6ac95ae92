// Tables of the library: regions, comments and what hangs off them.
// (Takes, tags, device links and history are in schema.ts.)
// eslint-disable-next-line @typescript-eslint/no-empty-object-type
export interface LibraryTables {}
