// Real services for the scaled suite, from Debian's packages, on 127.0.0.1 only: redis-server
// and an S3 gateway (radosgw) over a one-node Ceph cluster (one monitor, one OSD keeping its
// objects in memory). Everything lives in one temporary folder and goes with stop().
import { execFile, spawn } from 'node:child_process'
import { randomBytes, randomUUID } from 'node:crypto'
import fs from 'node:fs'
import net from 'node:net'
import os from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'

const run = promisify(execFile)

export const PROGRAMS = [
  { program: '/usr/bin/redis-server', pkg: 'redis-server' },
  { program: '/usr/bin/ceph-mon', pkg: 'ceph-mon' },
  { program: '/usr/bin/ceph-osd', pkg: 'ceph-osd' },
  { program: '/usr/bin/radosgw', pkg: 'radosgw' },
  { program: '/usr/bin/radosgw-admin', pkg: 'radosgw' },
  { program: '/usr/bin/ceph', pkg: 'ceph-common' },
  { program: '/usr/bin/ceph-authtool', pkg: 'ceph-common' },
  { program: '/usr/bin/monmaptool', pkg: 'ceph-common' },
]

/** A free TCP port on the loopback address. */
export function freePort() {
  return new Promise((resolve, reject) => {
    const srv = net.createServer()
    srv.once('error', reject)
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address()
      srv.close(() => resolve(port))
    })
  })
}

const sleep = (ms) => new Promise((r) => setTimeout(r, ms))

async function waitFor(what, check, timeoutMs) {
  const until = Date.now() + timeoutMs
  let last
  while (Date.now() < until) {
    try {
      if (await check()) return
    } catch (err) {
      last = err
    }
    await sleep(250)
  }
  throw new Error(`${what} did not come up within ${timeoutMs / 1000} s${last ? `: ${last.message}` : ''}`)
}

function cephConf({ dir, fsid, monPort, rgwPort }) {
  return `[global]
fsid = ${fsid}
mon host = [v2:127.0.0.1:${monPort}]
public addr = 127.0.0.1
ms bind ipv6 = false
ms bind msgr1 = false
; cephx stays on: with auth off radosgw never completes its handshake with the monitor.
auth cluster required = cephx
auth service required = cephx
auth client required = cephx
keyring = ${dir}/keyring
run dir = ${dir}/run
admin socket = ${dir}/run/$name.asok
pid file = ${dir}/run/$name.pid
log file = ${dir}/log/$name.log
mon data = ${dir}/mon/$cluster-$id
osd data = ${dir}/osd/$cluster-$id
osd objectstore = memstore
memstore device bytes = ${2 * 2 ** 30}
osd pool default size = 1
osd pool default min size = 1
mon allow pool size one = true
mon warn on pool no redundancy = false
osd pool default pg num = 8
osd pool default pgp num = 8
osd pool default pg autoscale mode = off
osd crush chooseleaf type = 0
mon max pg per osd = 1000
osd max object name len = 256
osd max object namespace len = 64

[client.rgw]
rgw frontends = beast endpoint=127.0.0.1:${rgwPort}
rgw data = ${dir}/rgw
rgw dns name = 127.0.0.1
`
}

/**
 * Starts redis-server and the Ceph S3 gateway; resolves to the environment the suite runs
 * with and a stop() that ends every process it started (safe to call twice).
 */
export async function startServices({ log = console.log } = {}) {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-scaled-'))
  const children = []
  let stopped = false
  const stop = async () => {
    if (stopped) return
    stopped = true
    for (const c of children.reverse()) if (c.exitCode === null && c.signalCode === null) c.kill('SIGTERM')
    await Promise.all(
      children.map(
        (c) =>
          new Promise((r) => {
            if (c.exitCode !== null || c.signalCode !== null) return r()
            const t = setTimeout(() => (c.kill('SIGKILL'), r()), 5000)
            c.once('exit', () => (clearTimeout(t), r()))
          }),
      ),
    )
    fs.rmSync(dir, { recursive: true, force: true })
  }
  const daemon = (name, program, args) => {
    const out = fs.openSync(path.join(dir, 'log', `${name}.out`), 'a')
    const child = spawn(program, args, { stdio: ['ignore', out, out] })
    children.push(child)
    child.once('exit', (code, signal) => {
      if (!stopped) log(`[scaled] ${name} exited (${code ?? signal}); see ${dir}/log`)
    })
    return child
  }

  try {
    for (const d of ['run', 'log', 'mon', 'osd/ceph-0', 'rgw', 'redis'])
      fs.mkdirSync(path.join(dir, d), { recursive: true })
    const started = Date.now()

    // redis
    const redisPort = await freePort()
    daemon('redis', 'redis-server', [
      '--bind',
      '127.0.0.1',
      '--port',
      String(redisPort),
      '--save',
      '',
      '--appendonly',
      'no',
      '--dir',
      path.join(dir, 'redis'),
    ])
    await waitFor(
      'redis-server',
      () => run('redis-cli', ['-p', String(redisPort), 'ping']).then((r) => r.stdout.includes('PONG')),
      20_000,
    )

    // Ceph: keys, monitor map, monitor
    const fsid = randomUUID()
    const monPort = await freePort()
    const rgwPort = await freePort()
    const conf = path.join(dir, 'ceph.conf')
    fs.writeFileSync(conf, cephConf({ dir, fsid, monPort, rgwPort }))
    const keyring = path.join(dir, 'keyring')
    const auth = (args) => run('ceph-authtool', args)
    await auth(['--create-keyring', keyring, '--gen-key', '-n', 'mon.', '--cap', 'mon', 'allow *'])
    await auth([
      keyring,
      '--gen-key',
      '-n',
      'client.admin',
      '--cap',
      'mon',
      'allow *',
      '--cap',
      'osd',
      'allow *',
      '--cap',
      'mgr',
      'allow *',
    ])
    await auth([
      keyring,
      '--gen-key',
      '-n',
      'osd.0',
      '--cap',
      'mon',
      'allow profile osd',
      '--cap',
      'osd',
      'allow *',
      '--cap',
      'mgr',
      'allow profile osd',
    ])
    await auth([
      keyring,
      '--gen-key',
      '-n',
      'client.rgw',
      '--cap',
      'mon',
      'allow rw',
      '--cap',
      'osd',
      'allow rwx',
      '--cap',
      'mgr',
      'allow rw',
    ])
    // The monitor map names the same v2 address that `mon host` gives every client.
    const monmap = path.join(dir, 'monmap')
    await run('monmaptool', ['--create', '--fsid', fsid, '--addv', 'a', `[v2:127.0.0.1:${monPort}]`, monmap])
    await run('ceph-mon', ['-c', conf, '--mkfs', '-i', 'a', '--monmap', monmap, '--keyring', keyring])
    daemon('mon.a', 'ceph-mon', ['-f', '-c', conf, '-i', 'a'])
    const ceph = (...args) => run('ceph', ['-c', conf, '--connect-timeout', '10', ...args])
    await waitFor('ceph-mon', () => ceph('mon', 'stat').then(() => true), 30_000)

    // One OSD in memory
    const osdUuid = randomUUID()
    await ceph('osd', 'new', osdUuid, '0')
    await run('ceph-osd', ['-c', conf, '-i', '0', '--mkfs', '--osd-uuid', osdUuid])
    daemon('osd.0', 'ceph-osd', ['-f', '-c', conf, '-i', '0'])
    await waitFor(
      'ceph-osd',
      () => ceph('osd', 'stat', '-f', 'json').then((r) => JSON.parse(r.stdout).num_up_osds === 1),
      60_000,
    )

    // The S3 gateway
    daemon('rgw', 'radosgw', ['-f', '-c', conf, '-n', 'client.rgw'])
    const endpoint = `http://127.0.0.1:${rgwPort}`
    await waitFor('radosgw', () => fetch(endpoint).then((r) => r.status < 500), 90_000)
    const accessKey = randomBytes(10).toString('hex').toUpperCase()
    const secretKey = randomBytes(20).toString('hex')
    await run('radosgw-admin', [
      '-c',
      conf,
      '-n',
      'client.admin',
      'user',
      'create',
      '--uid=strayfield-tests',
      '--display-name=Strayfield tests',
      `--access-key=${accessKey}`,
      `--secret=${secretKey}`,
    ])
    log(
      `[scaled] redis on ${redisPort}, S3 gateway on ${rgwPort}, up in ${((Date.now() - started) / 1000).toFixed(1)} s`,
    )
    return {
      dir,
      stop,
      env: {
        REDIS_URL: `redis://127.0.0.1:${redisPort}`,
        S3_ENDPOINT: endpoint,
        S3_REGION: 'us-east-1',
        AWS_ACCESS_KEY_ID: accessKey,
        AWS_SECRET_ACCESS_KEY: secretKey,
      },
    }
  } catch (err) {
    const logs = fs.existsSync(path.join(dir, 'log')) ? fs.readdirSync(path.join(dir, 'log')) : []
    for (const f of logs) {
      const text = fs.readFileSync(path.join(dir, 'log', f), 'utf8')
      if (text.trim()) log(`--- ${f} (last lines)\n${text.split('\n').slice(-15).join('\n')}`)
    }
    await stop()
    throw err
  }
}
