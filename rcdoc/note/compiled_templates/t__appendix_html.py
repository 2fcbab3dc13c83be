from jinja2.runtime import LoopContext, Macro, Markup, Namespace, TemplateNotFound, TemplateReference, TemplateRuntimeError, Undefined, escape, identity, internalcode, markup_join, missing, str_join
name = '_appendix.html'

def root(context, missing=missing, environment=environment):
    resolve = context.resolve_or_missing
    undefined = environment.undefined
    concat = environment.concat
    cond_expr_undefined = Undefined
    if 0: yield None
    l_0_appendix = resolve('appendix')
    try:
        t_1 = environment.tests['defined']
    except KeyError:
        @internalcode
        def t_1(*unused):
            raise TemplateRuntimeError("No test named 'defined' found.")
    pass
    if (t_1((undefined(name='appendix') if l_0_appendix is missing else l_0_appendix)) and (undefined(name='appendix') if l_0_appendix is missing else l_0_appendix)):
        pass
        yield '<div class="appendix">\n'
        l_1_loop = missing
        for l_1_section, l_1_loop in LoopContext((undefined(name='appendix') if l_0_appendix is missing else l_0_appendix), undefined):
            l_1_ui = resolve('ui')
            _loop_vars = {}
            pass
            yield '  <section class="appendix-section">\n    <h2 class="appendix-title" data-title="Appendix · '
            yield escape(environment.getattr(l_1_section, 'title'))
            yield '"><span class="appendix-mark">Appendix '
            yield escape(environment.getattr(l_1_loop, 'index'))
            yield '</span> '
            yield escape(environment.getattr(l_1_section, 'title'))
            yield '</h2>\n    '
            yield escape(environment.call(context, environment.getattr((undefined(name='ui') if l_1_ui is missing else l_1_ui), 'blocks'), environment.getattr(l_1_section, 'blocks'), _loop_vars=_loop_vars))
            yield '\n  </section>\n'
        l_1_loop = l_1_section = l_1_ui = missing
        yield '</div>\n'

blocks = {}
debug_info = '2=18&4=22&6=27&7=33'
# jinja2 3.1.6's code of templates/_appendix.html, written by tools/compile_templates.py: do not edit.
