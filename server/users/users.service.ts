// The members' accounts, as other features see them: sign-in (auth), the team page (team), the demo seed and
// the command line all read and write users through here, so neither auth nor team owns the other's table.
export { countUsers, findUserByEmail, findUserById, insertUser, listUsers, updateUser } from './users.repository'
export { userRowToMember, userRowToUser } from './users.mapper'
export { dummyHash, hashPassword, hashToken, newToken, verifyPassword } from './passwords'
