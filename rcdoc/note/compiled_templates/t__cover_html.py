from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = '_cover.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_stages = resolve('stages')
    l_0_board = resolve('board')
    l_0_generator = resolve('generator')
    l_0_changes = resolve('changes')
    l_0_status = resolve('status')
    l_0_analysis = resolve('analysis')
    l_0_failed = missing
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
        t_3 = environment.filters['list']
    except KeyError:
        @internalcode
        def t_3(*unused):
            raise TemplateRuntimeError("No filter named 'list' found.")
    try:
        t_4 = environment.filters['selectattr']
    except KeyError:
        @internalcode
        def t_4(*unused):
            raise TemplateRuntimeError("No filter named 'selectattr' found.")
    try:
        t_5 = environment.filters['upper']
    except KeyError:
        @internalcode
        def t_5(*unused):
            raise TemplateRuntimeError("No filter named 'upper' found.")
    try:
        t_6 = environment.tests['defined']
    except KeyError:
        @internalcode
        def t_6(*unused):
            raise TemplateRuntimeError("No test named 'defined' found.")
    pass
    l_0_failed = t_3(context.eval_ctx, t_4(context, (undefined(name='stages') if l_0_stages is missing else l_0_stages), 'status', 'equalto', 'fail'))
    context.vars['failed'] = l_0_failed
    context.exported_vars.add('failed')
    yield '<section class="cover" data-running="'
    yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'name'))
    yield ' · rev '
    yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'revision'))
    yield '" data-generator="'
    yield escape((undefined(name='generator') if l_0_generator is missing else l_0_generator))
    yield '">\n  <p class="kicker">Design note · RC networks</p>\n  <h1 class="board-name">'
    yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'name'))
    yield '</h1>\n  <p class="board-rev">Revision '
    yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'revision'))
    if environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'date'):
        pass
        yield ' · '
        yield escape(environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'date'))
    yield '</p>\n'
    if (t_6((undefined(name='changes') if l_0_changes is missing else l_0_changes)) and (undefined(name='changes') if l_0_changes is missing else l_0_changes)):
        pass
        yield '  <p class="board-since"><a href="#changes">'
        yield escape(environment.getattr((undefined(name='changes') if l_0_changes is missing else l_0_changes), 'title'))
        yield '</a></p>\n'
    if environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'authors'):
        pass
        yield '  <p class="board-authors">'
        yield escape(t_1(context.eval_ctx, environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'authors'), ', '))
        yield '</p>\n'
    yield '\n  <div class="overall verdict-'
    yield escape((undefined(name='status') if l_0_status is missing else l_0_status))
    yield '">\n    <span class="overall-word">'
    yield escape(t_5((undefined(name='status') if l_0_status is missing else l_0_status)))
    yield '</span>\n    <span class="overall-text">\n'
    if ((undefined(name='status') if l_0_status is missing else l_0_status) == 'pass'):
        pass
        yield '      All '
        yield escape(t_2((undefined(name='stages') if l_0_stages is missing else l_0_stages)))
        yield ' stage'
        yield escape(('' if (t_2((undefined(name='stages') if l_0_stages is missing else l_0_stages)) == 1) else 's'))
        yield ' meet their requirements.\n'
    else:
        pass
        yield '      '
        yield escape(t_2((undefined(name='failed') if l_0_failed is missing else l_0_failed)))
        yield ' of '
        yield escape(t_2((undefined(name='stages') if l_0_stages is missing else l_0_stages)))
        yield ' stage'
        yield escape(('' if (t_2((undefined(name='stages') if l_0_stages is missing else l_0_stages)) == 1) else 's'))
        yield ' fail'
        yield escape(('s' if (t_2((undefined(name='failed') if l_0_failed is missing else l_0_failed)) == 1) else ''))
        yield ' a requirement'
        if (undefined(name='failed') if l_0_failed is missing else l_0_failed):
            pass
            yield ': '
            l_1_loop = missing
            for l_1_s, l_1_loop in LoopContext((undefined(name='failed') if l_0_failed is missing else l_0_failed), undefined):
                _loop_vars = {}
                pass
                yield '<a href="#stage-'
                yield escape(environment.getattr(l_1_s, 'id'))
                yield '">'
                yield escape(environment.getattr(l_1_s, 'title'))
                yield '</a>'
                yield escape((', ' if (not environment.getattr(l_1_loop, 'last')) else cond_expr_undefined("the inline if-expression on line 21 in '_cover.html' evaluated to false and no else section was defined.")))
            l_1_loop = l_1_s = missing
        yield '.\n'
    yield '    </span>\n  </div>\n\n'
    if environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'notes'):
        pass
        yield '  <div class="board-notes">\n'
        for l_1_paragraph in environment.getattr((undefined(name='board') if l_0_board is missing else l_0_board), 'notes'):
            _loop_vars = {}
            pass
            yield '    <p>'
            yield escape(l_1_paragraph)
            yield '</p>\n'
        l_1_paragraph = missing
        yield '  </div>\n'
    yield '\n'
    if (undefined(name='analysis') if l_0_analysis is missing else l_0_analysis):
        pass
        yield '  <div class="settings">\n    <h4>Analysis settings</h4>\n    <table class="settings">\n      <tbody>\n'
        for (l_1_label, l_1_value) in (undefined(name='analysis') if l_0_analysis is missing else l_0_analysis):
            _loop_vars = {}
            pass
            yield '        <tr><th scope="row">'
            yield escape(l_1_label)
            yield '</th><td>'
            yield escape(l_1_value)
            yield '</td></tr>\n'
        l_1_label = l_1_value = missing
        yield '      </tbody>\n    </table>\n  </div>\n'
    yield '</section>\n'

blocks = {}
debug_info = '2=54&4=58&6=64&7=66&8=72&9=75&11=77&12=80&15=83&16=85&18=87&19=90&21=97&26=121&28=124&29=128&34=133&39=136&40=140'
# jinja2 3.1.6's code of templates/_cover.html, written by tools/compile_templates.py: do not edit.
