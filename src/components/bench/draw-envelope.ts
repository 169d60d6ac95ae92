// Our drawing of the waveform, handed to wavesurfer.js as its renderFunction:
// each channel in a lane of its own, its min/max envelope as a faint field with
// bright edges, and a solid core showing the level the signal keeps around each
// moment (the lowest envelope of the neighbouring columns), so bursts stand out
// of the body. The server's peaks hold only min/max pairs, so the core is drawn
// from them rather than from a true RMS. A vertical zoom scales everything; what the
// zoom pushes past the lane's edge is clipped there and marked with a dotted edge.

export interface EnvelopeColours {
  field: string
  edge: string
  core: string
  centre: string
}

const CORE_RADIUS = 6

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
        // Peaks come as (min, max) pairs: a column always reads whole pairs,
        // so a deep zoom (fewer pairs than columns) stays a solid envelope.
        const i0 = Math.floor((x * n) / W) & ~1
        const i1 = Math.max(i0 + 2, Math.ceil(((x + 1) * n) / W / 2) * 2)
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
      // The core: the lowest half-envelope within ±CORE_RADIUS columns, the
      // level the signal keeps around that moment; bursts rise out of it.
      ctx.fillStyle = c.core
      for (let x = 0; x < W; x++) {
        let low = half[x]
        for (let k = Math.max(0, x - CORE_RADIUS); k <= Math.min(W - 1, x + CORE_RADIUS); k++)
          if (half[k] < low) low = half[k]
        const h = low * reach
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
