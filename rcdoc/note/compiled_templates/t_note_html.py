from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = 'note.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_title = resolve('title')
    l_0_board = resolve('board')
    l_0_generator = resolve('generator')
    l_0_stages = resolve('stages')
    l_0_status = resolve('status')
    l_0_created = resolve('created')
    l_0_shared_css = resolve('shared_css')
    l_0_palette_css = resolve('palette_css')
    l_0_part = resolve('part')
    l_0_margin_css = resolve('margin_css')
    l_0_range = resolve('range')
    l_0_page_count = resolve('page_count')
    l_0_charts_apart = resolve('charts_apart')
    l_0_ui = missing
    try:
        t_1 = environment.filters['join']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No filter named 'join' found.")
    try:
        t_2 = environment.filters['length']
    except KeyError:
        @internalcode
        def t_2(*unused):
            raise TemplateRuntimeError("No filter named 'length' found.")
    try:
        t_3 = environment.tests['defined']
    except KeyError:
        @internalcode
        def t_3(*unused):
            raise TemplateRuntimeError("No test named 'defined' found.")
    pass
    l_0_ui = context.vars['ui'] = environment.get_template('_blocks.html', 'note.html')._get_default_module(context)
    context.exported_vars.discard('ui')
    yield '<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8" />\n<title>'
    yield escape((undefined(name='title') if l_0_title is missing else l_0_title))
    yield '</title>\n<meta name="author" content="'
    yield escape(t_1(context.eval_ctx, environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'authors'), ', '))
    yield '" />\n<meta name="generator" content="'
    yield escape((undefined(name='generator') if l_0_generator is missing else l_0_generator))
    yield '" />\n<meta name="description" content="Design note on the RC networks of '
    yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'name'))
    yield ' revision '
    yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'revision'))
    yield ': '
    yield escape(t_2((undefined(name='stages') if l_0_stages is missing else l_0_stages)))
    yield ' stage'
    yield escape(('' if (t_2((undefined(name='stages') if l_0_stages is missing else l_0_stages)) == 1) else 's'))
    yield ', overall '
    yield escape((undefined(name='status') if l_0_status is missing else l_0_status))
    yield '." />\n'
    if (undefined(name='created') if l_0_created is missing else l_0_created):
        pass
        yield '<meta name="dcterms.created" content="'
        yield escape((undefined(name='created') if l_0_created is missing else l_0_created))
        yield '" />\n<meta name="dcterms.modified" content="'
        yield escape((undefined(name='created') if l_0_created is missing else l_0_created))
        yield '" />\n'
    yield '<style>'
    if (not (t_3((undefined(name='shared_css') if l_0_shared_css is missing else l_0_shared_css)) and (undefined(name='shared_css') if l_0_shared_css is missing else l_0_shared_css))):
        pass
        yield escape((undefined(name='palette_css') if l_0_palette_css is missing else l_0_palette_css))
        yield '\n'
        template = environment.get_template('note.css', 'note.html')
        gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
        try:
            for event in gen:
                yield event
        finally: gen.close()
    if t_3((undefined(name='part') if l_0_part is missing else l_0_part)):
        pass
        if ((undefined(name='part') if l_0_part is missing else l_0_part) == 'numbers'):
            pass
            yield '@page { @top-left { content: none; } @top-right { content: none; } @bottom-left { content: none; } }\n'
        else:
            pass
            yield '@page { @bottom-right { content: none; } }\n'
        if ((undefined(name='part') if l_0_part is missing else l_0_part) in ('front', 'stage', 'appendix', 'overview')):
            pass
            yield '@page :first { @top-left { content: string(board); } @top-right { content: string(section); } }'
            if (t_3((undefined(name='margin_css') if l_0_margin_css is missing else l_0_margin_css)) and (undefined(name='margin_css') if l_0_margin_css is missing else l_0_margin_css)):
                pass
                yield escape((undefined(name='margin_css') if l_0_margin_css is missing else l_0_margin_css))
            yield '.summary, .stage, .appendix, .overview.apart { break-before: auto; }\n'
    yield '</style>\n</head>\n<body>\n'
    if (not t_3((undefined(name='part') if l_0_part is missing else l_0_part))):
        pass
        template = environment.get_template('_cover.html', 'note.html')
        gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
        try:
            for event in gen:
                yield event
        finally: gen.close()
        template = environment.get_template('_summary.html', 'note.html')
        gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
        try:
            for event in gen:
                yield event
        finally: gen.close()
        template = environment.get_template('_changes.html', 'note.html')
        gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
        try:
            for event in gen:
                yield event
        finally: gen.close()
        for l_1_stage in (undefined(name='stages') if l_0_stages is missing else l_0_stages):
            _loop_vars = {}
            pass
            template = environment.get_template('_stage.html', 'note.html')
            gen = template.root_render_func(template.new_context(context.get_all(), True, {'stage': l_1_stage, 'ui': l_0_ui}))
            try:
                for event in gen:
                    yield event
            finally: gen.close()
        l_1_stage = missing
        template = environment.get_template('_appendix.html', 'note.html')
        gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
        try:
            for event in gen:
                yield event
        finally: gen.close()
    elif ((undefined(name='part') if l_0_part is missing else l_0_part) == 'cover'):
        pass
        template = environment.get_template('_cover.html', 'note.html')
        gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
        try:
            for event in gen:
                yield event
        finally: gen.close()
    elif ((undefined(name='part') if l_0_part is missing else l_0_part) == 'numbers'):
        pass
        for l_1__ in environment.call(context, (undefined(name='range') if l_0_range is missing else l_0_range), (undefined(name='page_count') if l_0_page_count is missing else l_0_page_count)):
            _loop_vars = {}
            pass
            yield '<div style="break-before: page"></div>'
        l_1__ = missing
    else:
        pass
        yield '<div class="running-strings" data-running="'
        yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'name'))
        yield ' · rev '
        yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'revision'))
        yield '" data-generator="'
        yield escape((undefined(name='generator') if l_0_generator is missing else l_0_generator))
        yield '" style="string-set: board attr(data-running), generator attr(data-generator)"></div>\n'
        if ((undefined(name='part') if l_0_part is missing else l_0_part) == 'front'):
            pass
            template = environment.get_template('_summary.html', 'note.html')
            gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
            try:
                for event in gen:
                    yield event
            finally: gen.close()
            if (not (t_3((undefined(name='charts_apart') if l_0_charts_apart is missing else l_0_charts_apart)) and (undefined(name='charts_apart') if l_0_charts_apart is missing else l_0_charts_apart))):
                pass
                template = environment.get_template('_changes.html', 'note.html')
                gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
                try:
                    for event in gen:
                        yield event
                finally: gen.close()
        elif ((undefined(name='part') if l_0_part is missing else l_0_part) == 'stage'):
            pass
            for l_1_stage in (undefined(name='stages') if l_0_stages is missing else l_0_stages):
                _loop_vars = {}
                pass
                template = environment.get_template('_stage.html', 'note.html')
                gen = template.root_render_func(template.new_context(context.get_all(), True, {'stage': l_1_stage, 'ui': l_0_ui}))
                try:
                    for event in gen:
                        yield event
                finally: gen.close()
            l_1_stage = missing
        elif ((undefined(name='part') if l_0_part is missing else l_0_part) == 'overview'):
            pass
            yield '<section class="summary-charts" data-title="Summary">\n'
            template = environment.get_template('_overview.html', 'note.html')
            gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
            try:
                for event in gen:
                    yield event
            finally: gen.close()
            yield '</section>\n'
            template = environment.get_template('_changes.html', 'note.html')
            gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
            try:
                for event in gen:
                    yield event
            finally: gen.close()
        else:
            pass
            template = environment.get_template('_appendix.html', 'note.html')
            gen = template.root_render_func(template.new_context(context.get_all(), True, {'ui': l_0_ui}))
            try:
                for event in gen:
                    yield event
            finally: gen.close()
    yield '</body>\n</html>\n'

blocks = {}
debug_info = '6=43&11=46&12=48&13=50&14=52&15=62&16=65&17=67&22=70&23=72&24=74&26=80&31=82&36=88&40=91&47=96&48=98&49=104&50=110&51=116&52=119&54=126&55=132&57=134&58=140&59=142&62=150&63=156&64=158&66=164&67=166&69=172&70=174&71=177&73=184&76=187&78=194&80=202'
# jinja2 3.1.6's code of templates/note.html, written by tools/compile_templates.py: do not edit.
