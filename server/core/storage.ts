// The storage layer lives in server/storage/; this module keeps the old import path working.
export { Storage, openStorage } from '../storage/files'
