// html`…`: every interpolation escaped, markup only from html`…` or trusted(…), and the places where
// escaping is not enough refused.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { escapeText, html, joinMarkup, Markup, trusted } from '../../src/io/markup.ts';

describe('html', () => {
  it('html escapes strings and numbers, keeps nested markup, joins arrays and skips null, undefined and false', () => {
    const name = '<b>"Tom" & \'Jerry\'</b>';
    const out = html`<p title="${name}">${name} ${3.5} ${[html`<i>${'<x>'}</i>`, '<y>']}${null}${undefined}${false}</p>`;
    expect(out).toBeInstanceOf(Markup);
    expect(out.text).toBe('<p title="&lt;b&gt;&quot;Tom&quot; &amp; &#39;Jerry&#39;&lt;/b&gt;">&lt;b&gt;&quot;Tom&quot; &amp; &#39;Jerry&#39;&lt;/b&gt; 3.5 <i>&lt;x&gt;</i>&lt;y&gt;</p>');
    expect(String(html`<a>${trusted('<br>')}</a>`)).toBe('<a><br></a>');
  });

  it('html escapes a plain string that was built from markup (double escaping, never raw)', () => {
    const built = `${html`<b>x</b>`}`;
    expect(html`${built}`.text).toBe('&lt;b&gt;x&lt;/b&gt;');
  });

  it('html refuses unquoted attribute values, tag names, and plain text in URL attributes or in style and script', () => {
    expect(() => html`<p class=${'a'}>`).toThrow(/unquoted attribute/);
    expect(() => html`<${'p'}>`).toThrow(/tag name/);
    expect(() => html`<a href="${'javascript:alert(1)'}">`).toThrow(/URL attribute/);
    expect(() => html`<image src="${'x'}"/>`).toThrow(/URL attribute/);
    expect(() => html`<style>${'body{}'}</style>`).toThrow(/style element/);
    expect(() => html`<script>${'1'}</script>`).toThrow(/script or style/);
    expect(html`<a href="${trusted('#top')}">${'<top>'}</a><style>${trusted('p{}')}</style><p>${'after'}</p>`.text)
      .toBe('<a href="#top">&lt;top&gt;</a><style>p{}</style><p>after</p>');
    expect(() => new Markup('<b>', Symbol('markup'))).toThrow(TypeError);
    // An equals sign in text is not an attribute.
    expect(html`<p title="a">x = ${'<y>'}</p>`.text).toBe('<p title="a">x = &lt;y&gt;</p>');
  });

  it('joinMarkup joins pieces with an escaped separator', () => {
    expect(joinMarkup([html`<i>1</i>`, '<2>'], '\n').text).toBe('<i>1</i>\n&lt;2&gt;');
    expect(joinMarkup(['a', 'b'], '<').text).toBe('a&lt;b');
  });

  it('escapeText leaves no character that starts markup or ends an attribute, and drops those XML 1.0 forbids (property)', () => {
    fc.assert(fc.property(fc.string({ unit: 'binary' }), (s) => {
      const e = escapeText(s);
      expect(e).not.toMatch(/[<>"']/);
      expect(e).not.toMatch(/&(?!(amp|lt|gt|quot|#39);)/);
      // eslint-disable-next-line no-control-regex
      expect(e).not.toMatch(/[\u0000-\u0008\u000b\u000c\u000e-\u001f\ufffe\uffff]/);
      const back = e.replace(/&(lt|gt|quot|#39|amp);/g, (_, n: string) => ({ lt: '<', gt: '>', quot: '"', '#39': "'", amp: '&' })[n] as string);
      // eslint-disable-next-line no-control-regex
      expect(back).toBe(s.replace(/[\u0000-\u0008\u000b\u000c\u000e-\u001f\ufffe\uffff]/g, ''));
    }));
  });
});
