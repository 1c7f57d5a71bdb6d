import struct, sys, glob, os
D = glob.glob(os.path.expanduser('~/.cargo/registry/src/*/typst-assets-0.15.1/files/fonts/'))[0]
def cmap(path):
    b = open(path,'rb').read()
    numTables = struct.unpack('>H', b[4:6])[0]
    tables = {}
    for i in range(numTables):
        tag, cs, off, ln = struct.unpack('>4sIII', b[12+16*i:28+16*i])
        tables[tag] = (off, ln)
    off = tables[b'cmap'][0]
    n = struct.unpack('>H', b[off+2:off+4])[0]
    best = None
    for i in range(n):
        pid, eid, so = struct.unpack('>HHI', b[off+4+8*i:off+12+8*i])
        fmt = struct.unpack('>H', b[off+so:off+so+2])[0]
        if fmt == 12 or (fmt == 4 and best is None):
            best = (fmt, off+so)
            if fmt == 12: break
    fmt, s = best
    cps = set()
    if fmt == 12:
        ng = struct.unpack('>I', b[s+12:s+16])[0]
        for g in range(ng):
            a, z, gid = struct.unpack('>III', b[s+16+12*g:s+28+12*g])
            for c in range(a, z+1):
                if gid + (c-a) != 0: cps.add(c)
    else:
        segx2 = struct.unpack('>H', b[s+6:s+8])[0]; seg = segx2//2
        ends = struct.unpack('>%dH'%seg, b[s+14:s+14+segx2])
        starts = struct.unpack('>%dH'%seg, b[s+16+segx2:s+16+2*segx2])
        deltas = struct.unpack('>%dh'%seg, b[s+16+2*segx2:s+16+3*segx2])
        ro_off = s+16+3*segx2
        ros = struct.unpack('>%dH'%seg, b[ro_off:ro_off+segx2])
        for i in range(seg):
            for c in range(starts[i], ends[i]+1):
                if c == 0xFFFF: continue
                if ros[i] == 0:
                    gid = (c + deltas[i]) & 0xFFFF
                else:
                    addr = ro_off + 2*i + ros[i] + 2*(c-starts[i])
                    gid = struct.unpack('>H', b[addr:addr+2])[0]
                    if gid: gid = (gid + deltas[i]) & 0xFFFF
                if gid: cps.add(c)
    return cps
def union(names): 
    u=set()
    for n in names: u |= cmap(D+n)
    return u
regular = union(['LibertinusSerif-Regular.otf','NewCM10-Regular.otf','DejaVuSansMono.ttf'])
bold = union(['LibertinusSerif-Bold.otf','NewCM10-Bold.otf','DejaVuSansMono-Bold.ttf'])
italic = union(['LibertinusSerif-Italic.otf','NewCM10-Italic.otf','DejaVuSansMono-Oblique.ttf'])
cov = regular & bold & italic
cov = {c for c in cov if c >= 0x20 and not (0x7F <= c < 0xA0) and c not in (0x2028,0x2029) and not (0xE000 <= c <= 0xF8FF)}
cs = sorted(cov)
ranges=[]
for c in cs:
    if ranges and ranges[-1][1] == c-1: ranges[-1][1] = c
    else: ranges.append([c,c])
print(len(cs), len(ranges), file=sys.stderr)
for c in [0x4E2D, 0x1F600, 0xB0, 0x3BC, 0x2212, 0xB1, 0x2264, 0x2103, 0xE9, 0x416, 0x5D0]:
    print(hex(c), c in cov, file=sys.stderr)
out = ["/// Code points with a glyph in every style (regular, bold, italic) of the fonts typst embeds",
       "/// (Libertinus Serif, New Computer Modern, DejaVu Sans Mono; typst-assets 0.15.1), as",
       "/// inclusive ranges, generated from the fonts' cmap tables. Private-use and control",
       "/// characters are left out.",
       "pub const COVERED: &[(u32, u32)] = &["]
line="   "
for a,z in ranges:
    item=" (0x%04X, 0x%04X)," % (a,z)
    if len(line)+len(item) > 99:
        out.append(line); line="   "
    line+=item
out.append(line); out.append("];")
print("\n".join(out))
