import '../shared/base.css';
