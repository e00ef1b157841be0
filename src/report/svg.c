/* kilter: a small SVG writer for the report's plots.
 *
 * Everything is written straight to a FILE*; the caller checks ferror() once
 * at the end.  Text from a feeder file is escaped for both HTML and XML (the
 * five characters XML 1.0 section 2.4 and the HTML standard's "escaping a
 * string" treat specially), so an SVG is valid inline in HTML and as a file
 * of its own.  Coordinates are printed with two decimals (a hundredth of a
 * pixel is below what any screen shows); a non-finite coordinate would make
 * the SVG invalid, so such elements are left out rather than written. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include "kl_report.h"

void kl_xml_escape(FILE *out, const char *s)
{
    if (!s)
        return;
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        switch (*p) {
        case '&': fputs("&amp;", out); break;
        case '<': fputs("&lt;", out); break;
        case '>': fputs("&gt;", out); break;
        case '"': fputs("&quot;", out); break;
        case '\'': fputs("&#39;", out); break;
        default:
            /* C0 controls other than tab/LF/CR are not allowed in XML 1.0
             * (section 2.2): show U+FFFD REPLACEMENT CHARACTER instead. */
            if (*p < 0x20 && *p != '\t' && *p != '\n' && *p != '\r')
                fputs("\xEF\xBF\xBD", out);
            else
                fputc(*p, out);
        }
    }
}

static int finite2(double a, double b)
{
    return isfinite(a) && isfinite(b);
}

void kl_svg_open(FILE *out, double w, double h, const char *label)
{
    fprintf(out, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%.0f\" height=\"%.0f\" "
            "viewBox=\"0 0 %.0f %.0f\" role=\"img\" aria-label=\"", w, h, w, h);
    kl_xml_escape(out, label);
    fputs("\" font-family=\"sans-serif\" font-size=\"12\"><title>", out);
    kl_xml_escape(out, label);
    fputs("</title>\n", out);
}

void kl_svg_close(FILE *out)
{
    fputs("</svg>\n", out);
}

void kl_svg_text(FILE *out, double x, double y, const char *attr, const char *text)
{
    if (!finite2(x, y))
        return;
    fprintf(out, "<text x=\"%.2f\" y=\"%.2f\" %s>", x, y, attr ? attr : "");
    kl_xml_escape(out, text);
    fputs("</text>\n", out);
}

void kl_svg_textf(FILE *out, double x, double y, const char *attr, const char *fmt, ...)
{
    char buf[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    kl_svg_text(out, x, y, attr, buf);
}

void kl_svg_line(FILE *out, double x1, double y1, double x2, double y2, const char *attr)
{
    if (!finite2(x1, y1) || !finite2(x2, y2))
        return;
    fprintf(out, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" %s/>\n",
            x1, y1, x2, y2, attr ? attr : "");
}

/* Non-finite points break the line into separate pieces (a gap), so a bus
 * without a value does not draw a false segment to zero. */
void kl_svg_polyline(FILE *out, const double *x, const double *y, int n, const char *attr)
{
    int open = 0;
    for (int k = 0; k < n; k++) {
        if (!finite2(x[k], y[k])) {
            if (open)
                fprintf(out, "\" %s/>\n", attr ? attr : "");
            open = 0;
            continue;
        }
        if (!open)
            fputs("<polyline fill=\"none\" points=\"", out);
        fprintf(out, "%s%.2f,%.2f", open ? " " : "", x[k], y[k]);
        open = 1;
    }
    if (open)
        fprintf(out, "\" %s/>\n", attr ? attr : "");
}

void kl_svg_rect(FILE *out, double x, double y, double w, double h, const char *attr)
{
    if (!finite2(x, y) || !finite2(w, h) || w < 0 || h < 0)
        return;
    fprintf(out, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" %s/>\n",
            x, y, w, h, attr ? attr : "");
}

void kl_svg_circle(FILE *out, double cx, double cy, double r, const char *attr)
{
    if (!finite2(cx, cy) || !isfinite(r) || r < 0)
        return;
    fprintf(out, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"%.2f\" %s/>\n", cx, cy, r, attr ? attr : "");
}

/* The head is drawn as its own triangle rather than an SVG <marker>: markers
 * need document-wide ids, which would collide between plots in one page. */
void kl_svg_arrow(FILE *out, double x1, double y1, double x2, double y2, double head,
                  const char *colour, double width, const char *dash)
{
    double dx = x2 - x1, dy = y2 - y1, len = hypot(dx, dy);
    if (!finite2(x1, y1) || !finite2(x2, y2) || len < 1e-9)
        return;
    double ux = dx / len, uy = dy / len, h = head < len ? head : len;
    double bx = x2 - ux * h, by = y2 - uy * h; /* base of the head */
    fprintf(out, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"%s\" "
            "stroke-width=\"%.1f\"%s%s%s/>\n", x1, y1, bx, by, colour, width,
            dash ? " stroke-dasharray=\"" : "", dash ? dash : "", dash ? "\"" : "");
    fprintf(out, "<polygon points=\"%.2f,%.2f %.2f,%.2f %.2f,%.2f\" fill=\"%s\"/>\n",
            x2, y2, bx - uy * h * 0.35, by + ux * h * 0.35, bx + uy * h * 0.35,
            by - ux * h * 0.35, colour);
}

/* Heckbert's nice number: a 1, 2, 5 or 10 times a power of ten near x
 * (rounded when `round`, else the next one up). */
static double nicenum(double x, int round)
{
    double e = floor(log10(x)), f = x / pow(10.0, e), nf;
    if (round)
        nf = f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10;
    else
        nf = f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10;
    return nf * pow(10.0, e);
}

/* Loose labelling (P. S. Heckbert, "Nice numbers for graph labels",
 * Graphics Gems, 1990): the ticks start at or below lo and end at or above hi. */
int kl_svg_ticks(double lo, double hi, int nwant, double *ticks, int cap)
{
    if (!isfinite(lo) || !isfinite(hi) || hi <= lo || nwant < 2 || cap < 2)
        return 0;
    double d = nicenum(nicenum(hi - lo, 0) / (nwant - 1), 1);
    double g0 = floor(lo / d) * d, g1 = ceil(hi / d) * d;
    int n = (int)floor((g1 - g0) / d + 0.5) + 1;
    if (n > cap)
        n = cap;
    for (int k = 0; k < n; k++) {
        double v = g0 + k * d; /* from g0 each time: no accumulated drift */
        ticks[k] = fabs(v) < 1e-9 * d ? 0.0 : v;
    }
    return n;
}

double kl_svg_fx(const kl_svg_frame *f, double x)
{
    return f->px + (x - f->x0) / (f->x1 - f->x0) * f->pw;
}

double kl_svg_fy(const kl_svg_frame *f, double y)
{
    return f->py + f->ph - (y - f->y0) / (f->y1 - f->y0) * f->ph;
}

static void axis_x(FILE *out, const kl_svg_frame *f, int dec)
{
    if (dec < 0) /* categories, labelled by the caller */
        return;
    double t[32];
    int n = kl_svg_ticks(f->x0, f->x1, 8, t, 32);
    for (int k = 0; k < n; k++) {
        if (t[k] < f->x0 - 1e-9 * (f->x1 - f->x0) || t[k] > f->x1 + 1e-9 * (f->x1 - f->x0))
            continue;
        double x = kl_svg_fx(f, t[k]);
        kl_svg_line(out, x, f->py, x, f->py + f->ph, "stroke=\"#e4e1da\"");
        kl_svg_textf(out, x, f->py + f->ph + 15, "text-anchor=\"middle\" fill=\"#333\"",
                     "%.*f", dec, t[k]);
    }
}

static void axis_y(FILE *out, const kl_svg_frame *f, int dec)
{
    double t[32];
    int n = kl_svg_ticks(f->y0, f->y1, 7, t, 32);
    for (int k = 0; k < n; k++) {
        if (t[k] < f->y0 - 1e-9 * (f->y1 - f->y0) || t[k] > f->y1 + 1e-9 * (f->y1 - f->y0))
            continue;
        double y = kl_svg_fy(f, t[k]);
        kl_svg_line(out, f->px, y, f->px + f->pw, y, "stroke=\"#e4e1da\"");
        kl_svg_textf(out, f->px - 6, y + 4, "text-anchor=\"end\" fill=\"#333\"", "%.*f", dec, t[k]);
    }
}

void kl_svg_axes(FILE *out, const kl_svg_frame *f, const char *xlabel, int xdec,
                 const char *ylabel, int ydec)
{
    axis_x(out, f, xdec);
    axis_y(out, f, ydec);
    kl_svg_rect(out, f->px, f->py, f->pw, f->ph, "fill=\"none\" stroke=\"#555\"");
    kl_svg_text(out, f->px + f->pw / 2, f->py + f->ph + 34,
                "text-anchor=\"middle\" fill=\"#222\"", xlabel);
    double yx = f->px - 52, yy = f->py + f->ph / 2;
    if (!finite2(yx, yy))
        return;
    fprintf(out, "<text x=\"%.2f\" y=\"%.2f\" text-anchor=\"middle\" fill=\"#222\" "
            "transform=\"rotate(-90 %.2f %.2f)\">", yx, yy, yx, yy);
    kl_xml_escape(out, ylabel);
    fputs("</text>\n", out);
}

void kl_svg_band(FILE *out, const kl_svg_frame *f, double ylo, double yhi,
                 const char *fill, const char *label)
{
    double lo = ylo < f->y0 ? f->y0 : ylo, hi = yhi > f->y1 ? f->y1 : yhi;
    if (!(hi > lo))
        return;
    char attr[96];
    snprintf(attr, sizeof attr, "fill=\"%s\"", fill);
    double top = kl_svg_fy(f, hi), bot = kl_svg_fy(f, lo);
    kl_svg_rect(out, f->px, top, f->pw, bot - top, attr);
    if (label)
        kl_svg_text(out, f->px + f->pw - 4, top + 12, "text-anchor=\"end\" fill=\"#555\" "
                    "font-size=\"10\"", label);
}

void kl_svg_legend(FILE *out, double x, double y, int n, const char *const *labels,
                   const char *const *attr)
{
    for (int k = 0; k < n; k++) {
        double yy = y + 16 * k;
        kl_svg_line(out, x, yy - 4, x + 26, yy - 4, attr[k]);
        kl_svg_text(out, x + 32, yy, "fill=\"#222\"", labels[k]);
    }
}

/* Three stops interpolated in sRGB: readable on white, distinct from the
 * phase colours, and ordered light-dark-warm so "more" reads as "worse". */
const char *kl_svg_colour_scale(double t, char buf[8])
{
    static const double stop[3][3] = {{0x2b, 0x8a, 0x8f}, {0xe0, 0xb8, 0x4e}, {0x8e, 0x1b, 0x3c}};
    if (!isfinite(t))
        t = 0;
    t = t < 0 ? 0 : t > 1 ? 1 : t;
    int k = t < 0.5 ? 0 : 1;
    double u = t < 0.5 ? t * 2 : (t - 0.5) * 2;
    int rgb[3];
    for (int c = 0; c < 3; c++)
        rgb[c] = (int)lround(stop[k][c] + (stop[k + 1][c] - stop[k][c]) * u);
    snprintf(buf, 8, "#%02x%02x%02x", rgb[0], rgb[1], rgb[2]);
    return buf;
}
