// Our drawing of the waveform, handed to wavesurfer.js as its renderFunction:
// each channel in a lane of its own, its min/max envelope as a faint field with
// bright edges, and a solid core showing the level the signal keeps around each
// moment (the mean envelope of the neighbouring columns), so bursts stand out
// of the body. The server's peaks hold only min/max pairs, so the core is that
// local mean rather than a true RMS. A vertical zoom scales everything; what the
// zoom pushes past the lane's edge is clipped there and marked with a dotted edge.

export interface EnvelopeColours {
  field: string
  edge: string
  core: string
  centre: string
}

const CORE_RADIUS = 3

export function envelopeRenderer(gain: () => number, colours: () => EnvelopeColours) {
  return (peaks: Array<Float32Array | number[]>, ctx: CanvasRenderingContext2D) => {
    const W = ctx.canvas.width
    const H = ctx.canvas.height
    const c = colours()
    const g = gain()
    const lanes = Math.max(1, peaks.length)
    const laneH = H / lanes
    ctx.clearRect(0, 0, W, H)
    const lo = new Float32Array(W)
    const hi = new Float32Array(W)
    const half = new Float32Array(W)
    for (let ch = 0; ch < lanes; ch++) {
      const data = peaks[ch]
      const n = data?.length ?? 0
      const mid = laneH * (ch + 0.5)
      const reach = laneH / 2 - 1
      let clipped = false
      for (let x = 0; x < W; x++) {
        const i0 = Math.floor((x * n) / W)
        const i1 = Math.max(i0 + 1, Math.floor(((x + 1) * n) / W))
        let min = 0
        let max = 0
        for (let i = i0; i < i1 && i < n; i++) {
          const v = data[i]
          if (v < min) min = v
          if (v > max) max = v
        }
        min *= g
        max *= g
        if (max > 1 || min < -1) clipped = true
        lo[x] = Math.max(-1, min)
        hi[x] = Math.min(1, max)
        half[x] = (hi[x] - lo[x]) / 2
      }
      // The field between the envelope's edges.
      ctx.beginPath()
      ctx.moveTo(0, mid - hi[0] * reach)
      for (let x = 1; x < W; x++) ctx.lineTo(x, mid - hi[x] * reach)
      for (let x = W - 1; x >= 0; x--) ctx.lineTo(x, mid - lo[x] * reach)
      ctx.closePath()
      ctx.fillStyle = c.field
      ctx.fill()
      // The core: the mean half-envelope over ±CORE_RADIUS columns, about the lane's centre.
      ctx.fillStyle = c.core
      let sum = 0
      for (let x = 0; x < Math.min(W, CORE_RADIUS); x++) sum += half[x]
      for (let x = 0; x < W; x++) {
        const add = x + CORE_RADIUS
        const drop = x - CORE_RADIUS - 1
        if (add < W) sum += half[add]
        if (drop >= 0) sum -= half[drop]
        const count = Math.min(W - 1, add) - Math.max(0, drop + 1) + 1
        const h = Math.min(half[x], sum / count) * reach
        if (h > 0.3) ctx.fillRect(x, mid - h, 1, 2 * h)
      }
      // Bright edges.
      ctx.strokeStyle = c.edge
      ctx.lineWidth = Math.max(1, Math.round(W / Math.max(1, ctx.canvas.clientWidth || W)))
      for (const edge of [hi, lo]) {
        ctx.beginPath()
        ctx.moveTo(0, mid - edge[0] * reach)
        for (let x = 1; x < W; x++) ctx.lineTo(x, mid - edge[x] * reach)
        ctx.stroke()
      }
      // Centre line, and dotted lane edges where the vertical zoom clips.
      ctx.fillStyle = c.centre
      ctx.fillRect(0, Math.round(mid), W, 1)
      if (clipped) {
        for (let x = 0; x < W; x += 6) {
          if (hi[x] >= 1) ctx.fillRect(x, mid - reach - 1, 3, 2)
          if (lo[x] <= -1) ctx.fillRect(x, mid + reach - 1, 3, 2)
        }
      }
    }
  }
}
