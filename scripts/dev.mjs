// `npm run dev`: the API with reload (tsx watch) and Vite's dev server with HMR,
// which proxies /api to the API. One Ctrl-C stops both.
import { spawn } from 'node:child_process'

const children = [
  spawn('npx', ['tsx', 'watch', '--clear-screen=false', 'server/main.ts'], { stdio: 'inherit' }),
  spawn('npx', ['vite'], { stdio: 'inherit' }),
]
const stop = () => children.forEach((c) => c.kill('SIGTERM'))
process.on('SIGINT', stop)
process.on('SIGTERM', stop)
children.forEach((c) =>
  c.on('exit', (code) => {
    stop()
    process.exitCode = code ?? 0
  }),
)
