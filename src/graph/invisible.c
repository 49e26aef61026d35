/*
** invisible.c: UTF-8 decoding and the characters that print as nothing or
** as a blank.  Two names that differ only by such a character look the
** same on a screen, so the notation refuses them in bare names and the
** writer escapes them inside quotes.
**
** The set is Unicode's White_Space property (PropList.txt) and its
** Default_Ignorable_Code_Point property (DerivedCoreProperties.txt), both
** beyond ASCII, less the variation selectors (an emoji name needs them and
** they follow a visible base), plus the C1 controls and the braille blank.
*/
#include <stdio.h>
#include "notation.h"

typedef struct span { uint32_t lo, hi; const char *name; } span;

/* Sorted by code point; one entry per character where the name helps. */
static const span invisible[] = {
  {0x0080, 0x009F, "control character"},
  {0x00A0, 0x00A0, "no-break space"},
  {0x00AD, 0x00AD, "soft hyphen"},
  {0x034F, 0x034F, "combining grapheme joiner"},
  {0x061C, 0x061C, "Arabic letter mark"},
  {0x115F, 0x1160, "Hangul filler"},
  {0x1680, 0x1680, "Ogham space mark"},
  {0x17B4, 0x17B5, "Khmer inherent vowel"},
  {0x180E, 0x180E, "Mongolian vowel separator"},
  {0x2000, 0x2000, "en quad"},
  {0x2001, 0x2001, "em quad"},
  {0x2002, 0x2002, "en space"},
  {0x2003, 0x2003, "em space"},
  {0x2004, 0x2004, "three-per-em space"},
  {0x2005, 0x2005, "four-per-em space"},
  {0x2006, 0x2006, "six-per-em space"},
  {0x2007, 0x2007, "figure space"},
  {0x2008, 0x2008, "punctuation space"},
  {0x2009, 0x2009, "thin space"},
  {0x200A, 0x200A, "hair space"},
  {0x200B, 0x200B, "zero-width space"},
  {0x200C, 0x200C, "zero-width non-joiner"},
  {0x200D, 0x200D, "zero-width joiner"},
  {0x200E, 0x200E, "left-to-right mark"},
  {0x200F, 0x200F, "right-to-left mark"},
  {0x2028, 0x2028, "line separator"},
  {0x2029, 0x2029, "paragraph separator"},
  {0x202A, 0x202A, "left-to-right embedding"},
  {0x202B, 0x202B, "right-to-left embedding"},
  {0x202C, 0x202C, "pop directional formatting"},
  {0x202D, 0x202D, "left-to-right override"},
  {0x202E, 0x202E, "right-to-left override"},
  {0x202F, 0x202F, "narrow no-break space"},
  {0x205F, 0x205F, "medium mathematical space"},
  {0x2060, 0x2060, "word joiner"},
  {0x2061, 0x2064, "invisible operator"},
  {0x2065, 0x2065, "unassigned invisible character"},
  {0x2066, 0x2066, "left-to-right isolate"},
  {0x2067, 0x2067, "right-to-left isolate"},
  {0x2068, 0x2068, "first strong isolate"},
  {0x2069, 0x2069, "pop directional isolate"},
  {0x206A, 0x206F, "deprecated format character"},
  {0x2800, 0x2800, "braille pattern blank"},
  {0x3000, 0x3000, "ideographic space"},
  {0x3164, 0x3164, "Hangul filler"},
  {0xFEFF, 0xFEFF, "byte-order mark"},
  {0xFFA0, 0xFFA0, "halfwidth Hangul filler"},
  {0xFFF0, 0xFFF8, "unassigned invisible character"},
  {0x1BCA0, 0x1BCA3, "shorthand format control"},
  {0x1D173, 0x1D17A, "musical format character"},
  {0xE0000, 0xE00FF, "tag character"},
  {0xE01F0, 0xE0FFF, "unassigned invisible character"},
};

const char *sl_invisible_name(uint32_t cp) {
  if (cp < 0x80) return NULL;
  size_t lo = 0, hi = sizeof invisible / sizeof invisible[0];
  while (lo < hi) {   /* binary search of the sorted spans */
    size_t mid = (lo + hi) / 2;
    if (cp < invisible[mid].lo) hi = mid;
    else if (cp > invisible[mid].hi) lo = mid + 1;
    else return invisible[mid].name;
  }
  return NULL;
}

size_t sl_utf8_decode(const char *s, size_t left, uint32_t *cp) {
  const unsigned char *p = (const unsigned char *)s;
  if (left == 0) return 0;
  size_t n = p[0] < 0x80 ? 1 : (p[0] & 0xE0) == 0xC0 ? 2 : (p[0] & 0xF0) == 0xE0 ? 3
           : (p[0] & 0xF8) == 0xF0 ? 4 : 0;
  if (n == 0 || left < n) return 0;
  if (n == 2 && p[0] < 0xC2) return 0;                       /* overlong */
  for (size_t i = 1; i < n; i++) if ((p[i] & 0xC0) != 0x80) return 0;
  if (n == 3 && ((p[0] == 0xE0 && p[1] < 0xA0) || (p[0] == 0xED && p[1] >= 0xA0))) return 0;
  if (n == 4 && ((p[0] == 0xF0 && p[1] < 0x90) || p[0] > 0xF4 || (p[0] == 0xF4 && p[1] >= 0x90)))
    return 0;                                                /* overlong, surrogate, too big */
  uint32_t c = n == 1 ? p[0] : n == 2 ? p[0] & 0x1Fu : n == 3 ? p[0] & 0x0Fu : p[0] & 0x07u;
  for (size_t i = 1; i < n; i++) c = (c << 6) | (p[i] & 0x3Fu);
  *cp = c;
  return n;
}

/* The first invisible character of a string, as its code point; 0 when none. */
uint32_t sl_invisible_in(const char *s, size_t len) {
  size_t i = 0;
  while (i < len) {
    uint32_t cp;
    size_t n = sl_utf8_decode(s + i, len - i, &cp);
    if (n == 0) { i++; continue; }
    if (sl_invisible_name(cp)) return cp;
    i += n;
  }
  return 0;
}
