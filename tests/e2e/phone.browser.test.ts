// In real Chromium at a phone's width (390 × 844 CSS px) against the built server: no page the
// reviewer walks through scrolls sideways; the top bar folds into one menu whose "Sign out" is on
// screen; on the review desk the fit under review comes before the queue; the skip link is the
// first thing the keyboard reaches and moves the focus to the content; secondary grey text keeps a
// contrast of at least 4.5:1 on the page's darkest background (WCAG 2.1 AA for normal text).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
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
});
