// In real Chromium at a phone's width (390 × 844 CSS px) against the built server: no page the
// reviewer walks through scrolls sideways; the top bar folds into one menu whose "Sign out" is on
// screen; on the review desk the fit under review comes before the queue; the skip link is the
// first thing the keyboard reaches and moves the focus to the content; secondary grey text keeps a
// contrast of at least 4.5:1 on the page's darkest background (WCAG 2.1 AA for normal text), and
// every piece of text drawn on the campaign, review, catalogue, intake and admin pages, as each
// role sees them, does too against the background it sits on (3:1 for large text, WCAG 2.1 1.4.3).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { createCampaign } from '../../src/server/campaigns';
import { setArchived } from '../../src/server/members';
import { type ReviewDemo, startWithReviewDemo } from './harness';

let demo: ReviewDemo;

beforeAll(async () => {
  demo = await startWithReviewDemo();
});
afterAll(() => demo?.stop());

const sideways = (page: Page) => page.evaluate(() => document.documentElement.scrollWidth - document.documentElement.clientWidth);

/** WCAG 2.1 contrast ratio of two #rrggbb colours (relative luminance as WCAG 2.1 defines it). */
function contrast(a: string, b: string): number {
  const lum = (hex: string) => {
    const [r, g, bl] = [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16) / 255).map((x) => (x <= 0.03928 ? x / 12.92 : ((x + 0.055) / 1.055) ** 2.4));
    return 0.2126 * r + 0.7152 * g + 0.0722 * bl;
  };
  const [hi, lo] = [lum(a), lum(b)].sort((x, y) => y - x);
  return (hi + 0.05) / (lo + 0.05);
}

describe('at 390 px', () => {
  it('folds the top bar, scrolls no page sideways, and puts the fit under review before the queue', async () => {
    const page = await demo.browser.context.newPage();
    await page.setViewportSize({ width: 390, height: 844 });
    await demo.signIn(page, 'reviewer');
    for (const p of ['/campaigns', `/campaigns/${demo.campaignId}`, `/campaigns/${demo.campaignId}/review`, `/campaigns/${demo.campaignId}/catalogue`, `/campaigns/${demo.campaignId}/stars`, `/campaigns/${demo.campaignId}/stars/Cindermoor`, `/campaigns/${demo.campaignId}/batches`, '/about']) {
      await page.goto(`${demo.run.baseUrl}${p}`);
      await page.waitForLoadState('load');
      expect(await sideways(page), `${p} scrolls sideways`).toBeLessThanOrEqual(0);
    }
    // The top bar: the menu opens, and "Sign out" is on screen.
    await page.goto(`${demo.run.baseUrl}/campaigns`);
    await page.getByTestId('phone-menu').locator('summary').click();
    const signOut = page.getByTestId('phone-menu').getByRole('button', { name: 'Sign out' });
    const box = (await signOut.boundingBox())!;
    expect(box.x).toBeGreaterThanOrEqual(0);
    expect(box.x + box.width).toBeLessThanOrEqual(390);
    expect(await sideways(page)).toBeLessThanOrEqual(0);

    // The review desk: the card above the queue.
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    await page.getByTestId('queue-list').waitFor();
    const card = (await page.getByTestId('review-card').boundingBox())!;
    const queue = (await page.getByTestId('queue-list').boundingBox())!;
    expect(card.y).toBeLessThan(queue.y);
    expect(card.x + card.width).toBeLessThanOrEqual(390);
    await page.close();
  });

  it('has a skip link first in the keyboard order, and grey text of at least 4.5:1', async () => {
    const page = await demo.browser.context.newPage();
    await demo.signIn(page, 'reviewer');
    await page.goto(`${demo.run.baseUrl}/campaigns/${demo.campaignId}/review`);
    await page.keyboard.press('Tab');
    const skip = await page.evaluate(() => ({ text: document.activeElement?.textContent, href: document.activeElement?.getAttribute('href') }));
    expect(skip).toEqual({ text: 'Skip to the content', href: '#main' });
    await page.keyboard.press('Enter');
    await expect.poll(() => page.evaluate(() => document.activeElement?.id)).toBe('main');
    // The lightest grey used for text, against the light backgrounds it sits on: the page, the
    // table heads and the selected queue row (the colours the built style sheet defines).
    const colours = await page.evaluate(() => {
      const v = (name: string) => getComputedStyle(document.documentElement).getPropertyValue(name).trim();
      return { grey: v('--color-ink-500'), backgrounds: [v('--color-paper'), v('--color-paper-deep'), v('--color-ember-100')] };
    });
    expect(colours.grey).toMatch(/^#[0-9a-f]{6}$/i);
    for (const bg of colours.backgrounds) expect(contrast(colours.grey, bg), `${colours.grey} on ${bg}`).toBeGreaterThanOrEqual(4.5);
    await page.close();
  });

  it('draws every text of the pages each role walks through at a contrast of at least 4.5:1 (3:1 when large)', async () => {
    // An archived campaign beside the demo's, so the campaign list shows how an archived one looks.
    const analyst = demo.actor(demo.people.analyst.email);
    const archived = createCampaign(demo.run.app.db, analyst, { name: 'Lanternfield pilot (archived)', description: 'The first test fields.' });
    setArchived(demo.run.app.db, analyst, archived.id, { archived: true });
    const c = `/campaigns/${demo.campaignId}`;
    const walks: [Parameters<ReviewDemo['signIn']>[1], string[]][] = [
      ['analyst', ['/campaigns', c, `${c}/intake`, `${c}/batches`, `${c}/stars`, `${c}/stars/Harthglow`, `${c}/catalogue`, '/account/tokens', '/about']],
      ['reviewer', [`${c}/review`, `${c}/stars/Orrowind`]],
      ['admin', ['/admin', '/admin/people', '/admin/outbox', '/admin/bands', `${c}/review`]],
    ];
    const page = await demo.browser.context.newPage();
    const problems: string[] = [];
    for (const [who, paths] of walks) {
      await demo.signIn(page, who);
      for (const p of paths) {
        await page.goto(`${demo.run.baseUrl}${p}`);
        await page.waitForLoadState('load');
        // Islands hydrated (an island waiting for its script still carries the ssr attribute), the desk's queue loaded.
        await page.waitForFunction(() => !document.querySelector('astro-island[ssr]'), undefined, { timeout: 30_000 });
        if (p.endsWith('/review')) await page.getByTestId('current-star').waitFor({ timeout: 30_000 });
        problems.push(...(await lowContrastText(page)).map((t) => `${who} ${p}: ${t}`));
      }
    }
    expect(problems).toEqual([]);
    await page.close();
  });
});

/**
 * Text drawn below WCAG 2.1 AA contrast: for each element holding visible text (not inside a
 * figure's SVG, not a disabled control, which WCAG exempts), its colour (with its alpha and every
 * ancestor's opacity) over the nearest ancestor's opaque background colour; large text is ≥ 24 px,
 * or ≥ 18.66 px bold.
 */
function lowContrastText(page: Page): Promise<string[]> {
  return page.evaluate(() => {
    const rgba = (c: string) => {
      const m = c.match(/rgba?\(([^)]+)\)/);
      if (!m) return null;
      const v = m[1].split(/[ ,/]+/).filter(Boolean).map(Number);
      return [v[0], v[1], v[2], v[3] ?? 1];
    };
    const lum = (c: number[]) => {
      const f = (x: number) => (x / 255 <= 0.03928 ? x / 255 / 12.92 : ((x / 255 + 0.055) / 1.055) ** 2.4);
      return 0.2126 * f(c[0]) + 0.7152 * f(c[1]) + 0.0722 * f(c[2]);
    };
    const out: string[] = [];
    const seen = new Set<Element>();
    const walker = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT);
    for (let n = walker.nextNode(); n; n = walker.nextNode()) {
      const el = n.parentElement;
      if (!el || !n.textContent?.trim() || seen.has(el)) continue;
      seen.add(el);
      if (el.closest('svg, .sr-only, :disabled, noscript, script, style, option')) continue;
      const box = el.getBoundingClientRect();
      const cs = getComputedStyle(el);
      if (box.width === 0 || box.height === 0 || cs.visibility === 'hidden') continue;
      let opacity = 1;
      let bg: number[] | null = null;
      for (let a: Element | null = el; a; a = a.parentElement) {
        const s = getComputedStyle(a);
        opacity *= Number(s.opacity);
        const b = rgba(s.backgroundColor);
        if (!bg && b && b[3] > 0) bg = b;
      }
      const back = bg ?? [255, 255, 255, 1];
      const fg = rgba(cs.color)!;
      const alpha = fg[3] * opacity;
      const seenFg = [0, 1, 2].map((i) => fg[i] * alpha + back[i] * (1 - alpha));
      const [hi, lo] = [lum(seenFg), lum(back)].sort((x, y) => y - x);
      const ratio = (hi + 0.05) / (lo + 0.05);
      const size = parseFloat(cs.fontSize);
      const large = size >= 24 || (Number(cs.fontWeight) >= 700 && size >= 18.66);
      if (ratio < (large ? 3 : 4.5)) out.push(`${ratio.toFixed(2)}:1 "${n.textContent.trim().slice(0, 40)}" (${el.tagName.toLowerCase()}.${el.className}) ${cs.color} on rgb(${back.slice(0, 3).join(', ')})`);
    }
    return out;
  });
}
