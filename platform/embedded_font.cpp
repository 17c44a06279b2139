// The UI font, DejaVu Sans (free licence; Debian package fonts-dejavu-core),
// built into the program so that no font path has to exist on the tablet.
// The assembler's .incbin copies the installed file at build time.

#ifndef FURROW_FONT_PATH
#error "FURROW_FONT_PATH must name the TTF to embed"
#endif

__asm__(".section .rodata\n"
        ".global furrow_font_ttf_begin\n"
        ".balign 16\n"
        "furrow_font_ttf_begin:\n"
        ".incbin \"" FURROW_FONT_PATH "\"\n"
        ".global furrow_font_ttf_end\n"
        "furrow_font_ttf_end:\n"
        ".byte 0\n"
        ".previous\n");
