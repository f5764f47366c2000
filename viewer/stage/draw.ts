/**
 * Paints a StageGeometry into a Pixi container. All the numbers come from geometry.ts; this file
 * only chooses strokes and colours (from theme.ts). It is called on every scrub step, so it keeps
 * its Graphics and Text objects between redraws: the parts that do not move are redrawn only when
 * the layout changes, and a Text is touched only when its string, style or place changes.
 */

import { Container, Graphics, Text, TextStyle } from 'pixi.js';
import { hex, palette, type as typeScale } from '../theme.ts';
import type { Arrow, GaugeStage, RoverStage, StageGeometry, StageText, Tone, TrolleyStage } from './types.ts';

const colour = {
  ink: hex(palette.ink),
  soft: hex(palette.inkSoft),
  faint: hex(palette.inkFaint),
  rule: hex(palette.rule),
  paper: hex(palette.paper),
  panel: hex(palette.panel),
  greedy: hex(palette.greedy),
  explored: hex(palette.explored),
  alarm: hex(palette.alarm),
} as const;

const toneColour: Record<Tone, number> = {
  ink: colour.ink,
  soft: colour.soft,
  faint: colour.faint,
  greedy: colour.greedy,
  explored: colour.explored,
  alarm: colour.alarm,
};

export class StageDrawing {
  /** Rail, crater, gauge tracks: redrawn only when the geometry's layoutKey changes. */
  readonly #fixed = new Graphics();
  /** Everything that moves with the step. */
  readonly #moving = new Graphics();
  readonly #textLayer = new Container();
  readonly #texts: Text[] = [];
  readonly #styles = new Map<string, TextStyle>();
  #layoutKey: string | undefined;

  constructor(readonly root: Container) {
    root.addChild(this.#fixed, this.#moving, this.#textLayer);
  }

  draw(stage: StageGeometry): void {
    const relayout = stage.layoutKey !== this.#layoutKey;
    if (relayout) this.#fixed.clear();
    this.#moving.clear();
    switch (stage.kind) {
      case 'cart-pole':
        if (relayout) drawRail(this.#fixed, stage);
        drawTrolley(this.#moving, stage);
        break;
      case 'mountain-car':
        if (relayout) drawCrater(this.#fixed, stage);
        drawRover(this.#moving, stage);
        break;
      case 'gauges':
        if (relayout) drawTracks(this.#fixed, stage);
        drawMarkers(this.#moving, stage);
        break;
    }
    this.#layoutKey = stage.layoutKey;
    this.#drawTexts(stage.texts);
  }

  destroy(): void {
    this.root.removeChild(this.#fixed, this.#moving, this.#textLayer);
    this.#fixed.destroy();
    this.#moving.destroy();
    this.#textLayer.destroy({ children: true });
    for (const style of this.#styles.values()) style.destroy();
    this.#styles.clear();
  }

  #drawTexts(items: readonly StageText[]): void {
    for (const [i, item] of items.entries()) {
      let text = this.#texts[i];
      if (text === undefined) {
        text = new Text({ text: '', style: this.#style(item) });
        this.#texts.push(text);
        this.#textLayer.addChild(text);
      }
      const style = this.#style(item);
      if (text.style !== style) text.style = style;
      if (text.text !== item.text) text.text = item.text;
      text.anchor.set(item.anchorX, item.anchorY);
      // Whole pixels keep small text crisp.
      text.position.set(Math.round(item.x), Math.round(item.y));
      text.visible = true;
    }
    for (let i = items.length; i < this.#texts.length; i++) this.#texts[i].visible = false;
  }

  /** One shared TextStyle per (size, tone, face): swapping a shared style is cheaper than editing one. */
  #style(item: StageText): TextStyle {
    const key = `${item.size}|${item.tone}|${item.mono === true}`;
    let style = this.#styles.get(key);
    if (style === undefined) {
      style = new TextStyle({
        fontFamily: item.mono === true ? typeScale.mono : typeScale.family,
        fontSize: item.size === 'small' ? typeScale.small : typeScale.body,
        fill: toneColour[item.tone],
      });
      this.#styles.set(key, style);
    }
    return style;
  }
}

function drawRail(g: Graphics, stage: TrolleyStage): void {
  const { rail, limits } = stage;
  g.moveTo(rail.x0, rail.y).lineTo(rail.x1, rail.y).stroke({ width: 3, color: colour.rule, cap: 'round' });
  for (const limit of limits) g.moveTo(limit.x, limit.y0).lineTo(limit.x, limit.y1);
  g.stroke({ width: 2, color: colour.soft });
}

function drawTrolley(g: Graphics, stage: TrolleyStage): void {
  const { wedge, mast, trolley, wheels, failed } = stage;
  if (wedge !== null) {
    g.moveTo(wedge.x, wedge.y).arc(wedge.x, wedge.y, wedge.r, wedge.from, wedge.to).closePath();
    g.fill({ color: colour.rule, alpha: 0.35 }).stroke({ width: 1, color: colour.faint });
  }
  const body = failed.rail ? colour.alarm : colour.ink;
  g.roundRect(trolley.x - trolley.w / 2, trolley.y - trolley.h / 2, trolley.w, trolley.h, 3).fill({ color: body });
  for (const wheel of wheels.points) g.circle(wheel.x, wheel.y, wheels.r);
  g.fill({ color: colour.panel }).stroke({ width: 1.5, color: body });

  // The mast carries a camera: a disc at the tip, so its lean reads at a glance.
  const mastColour = failed.mast ? colour.alarm : colour.soft;
  g.moveTo(mast.x0, mast.y0).lineTo(mast.x1, mast.y1).stroke({ width: 4, color: mastColour, cap: 'round' });
  g.circle(mast.x1, mast.y1, 5).fill({ color: mastColour });
  g.circle(mast.x0, mast.y0, 3).fill({ color: colour.panel }).stroke({ width: 1.5, color: mastColour });

  if (stage.arrow !== null) drawArrow(g, stage.arrow, stage.action.explored);
}

function drawCrater(g: Graphics, stage: RoverStage): void {
  const { curve, width, groundY, wall } = stage;
  const lastY = curve[curve.length - 1];
  // Left: the wall the rover stops against. Right: past the rim the ground stays level.
  g.poly([0, wall.y1, wall.x, wall.y1, ...curve, width, lastY, width, groundY, 0, groundY]).fill({ color: colour.rule, alpha: 0.45 });
  g.moveTo(wall.x, wall.y1);
  for (let i = 0; i < curve.length; i += 2) g.lineTo(curve[i], curve[i + 1]);
  g.lineTo(width, lastY).stroke({ width: 2, color: colour.soft, join: 'round' });
}

function drawRover(g: Graphics, stage: RoverStage): void {
  const { flag, rover, wheels } = stage;
  if (flag !== null) {
    g.moveTo(flag.x, flag.y0).lineTo(flag.x, flag.y1).stroke({ width: 2, color: colour.ink });
    g.poly(flag.cloth).fill({ color: stage.reachedGoal ? colour.ink : colour.soft });
  }
  g.poly(rover.body).fill({ color: colour.ink });
  for (const wheel of wheels.points) g.circle(wheel.x, wheel.y, wheels.r);
  g.fill({ color: colour.panel }).stroke({ width: 1.5, color: colour.ink });
  if (stage.arrow !== null) drawArrow(g, stage.arrow, stage.action.explored);
}

function drawTracks(g: Graphics, stage: GaugeStage): void {
  for (const { track } of stage.gauges) g.moveTo(track.x0, track.y).lineTo(track.x1, track.y);
  g.stroke({ width: 4, color: colour.rule, cap: 'round' });
  for (const { track } of stage.gauges) {
    g.moveTo(track.x0, track.y - 5).lineTo(track.x0, track.y + 5).moveTo(track.x1, track.y - 5).lineTo(track.x1, track.y + 5);
  }
  g.stroke({ width: 1, color: colour.faint });
}

function drawMarkers(g: Graphics, stage: GaugeStage): void {
  for (const gauge of stage.gauges) {
    const { track, marker } = gauge;
    if (gauge.nonFinite || marker === null) {
      // No place on the track: the whole track turns to the alarm colour, beside the 'NaN' text.
      g.moveTo(track.x0, track.y).lineTo(track.x1, track.y).stroke({ width: 4, color: colour.alarm, alpha: 0.6 });
      continue;
    }
    if (gauge.clipped !== 0) {
      // Past an end of the range: a triangle at that end pointing outward, not a dot.
      const s = gauge.clipped;
      g.poly([marker.x + 7 * s, marker.y, marker.x - 2 * s, marker.y - 6, marker.x - 2 * s, marker.y + 6]).fill({ color: colour.soft });
    } else {
      g.circle(marker.x, marker.y, 5).fill({ color: colour.ink });
    }
  }
}

/**
 * A greedy action is a solid line with a filled head in the greedy colour; an explored one is
 * dashed with a hollow head in the explored colour, so the two differ in shape as well as colour.
 */
function drawArrow(g: Graphics, arrow: Arrow, explored: boolean): void {
  const dx = arrow.x1 - arrow.x0;
  const dy = arrow.y1 - arrow.y0;
  const length = Math.hypot(dx, dy);
  if (!(length > 0)) return;
  const ux = dx / length;
  const uy = dy / length;
  const headLength = Math.min(10, length / 2);
  const halfWidth = headLength * 0.6;
  const baseX = arrow.x1 - ux * headLength;
  const baseY = arrow.y1 - uy * headLength;
  const head = [arrow.x1, arrow.y1, baseX - uy * halfWidth, baseY + ux * halfWidth, baseX + uy * halfWidth, baseY - ux * halfWidth];
  if (explored) {
    const dash = 4;
    const gap = 3;
    const shaft = length - headLength;
    for (let from = 0; from < shaft; from += dash + gap) {
      const to = Math.min(from + dash, shaft);
      g.moveTo(arrow.x0 + ux * from, arrow.y0 + uy * from).lineTo(arrow.x0 + ux * to, arrow.y0 + uy * to);
    }
    g.stroke({ width: 2.5, color: colour.explored });
    // Closed explicitly: Pixi's 2D-canvas renderer leaves a poly's outline open unless told.
    g.poly(head, true).fill({ color: colour.panel }).stroke({ width: 2, color: colour.explored, join: 'round' });
  } else {
    g.moveTo(arrow.x0, arrow.y0).lineTo(baseX, baseY).stroke({ width: 3, color: colour.greedy });
    g.poly(head).fill({ color: colour.greedy });
  }
}
